"""Where the copper is: the routes file, its validation, and the copper graph.

This package knows geometry and nothing about electricity. Lengths are metres
everywhere inside; units are converted once, when the routes file is read.
"""
