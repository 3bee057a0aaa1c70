"""parasite: the inductance and resistance of routed copper, wired into a SPICE netlist.

The library never prints and never exits; every input error is a
:class:`parasite.errors.ParasiteError` that carries the file and the place.
"""

__version__ = "0.1.0"
