from parasite.cli import main

main()
