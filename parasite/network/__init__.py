"""The circuit that the copper makes, built once from the extraction.

Modules: ``branches`` (exactly merged series chains, copper without current
left out), ``names`` (netlist names of the nodes), ``ports`` (where loops
drive the copper and probes touch it), ``solve`` (the nodal solve of a port),
``couplings`` (which couplings to write, positive definite as written),
``threshold`` (the coupling threshold chosen from the loops), ``network``
(:class:`Network`, :func:`build_network`). New kinds of branch (meshed pours,
broadband ladders) and reduced models belong beside these, as modules of
their own that the :class:`Network` points to.
"""

from parasite.network.network import Network, NetworkOptions, build_fast_network, build_network

__all__ = ["Network", "NetworkOptions", "build_fast_network", "build_network"]
