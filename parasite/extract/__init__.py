"""The physics: partial inductance and resistance of every segment.

Partial element equivalent circuit method (A. E. Ruehli, "Inductance
calculations in a complex integrated circuit environment", IBM J. Res. Dev.
16(5), 1972; "Equivalent circuit models for three-dimensional multiconductor
systems", IEEE Trans. MTT 22(3), 1974). SI units throughout.

Public API::

    inductance_matrix(arrays, *, progress=None) -> (N, N) H, symmetric, images included
    self_inductances(arrays) -> (N,) H, without images
    resistances(arrays, copper, frequency=None) -> (N,) ohm (None: DC)
    skin_depth(resistivity, frequency, mu_r=1.0) -> m

For large boards (docs/scale.md): :mod:`parasite.extract.operator` (the inductance as
an operator: dense reference, near field + fast far field: layer grids by FFT,
multipoles),
:mod:`parasite.extract.port_krylov` (iterative port solve),
:mod:`parasite.extract.sweep` (frequency sweep through :mod:`parasite.schedule`).

Which couplings are written is the network's business
(:mod:`parasite.network.couplings`).
"""

from parasite.extract.matrix import inductance_matrix, self_inductances
from parasite.extract.resistance import resistances, skin_depth

__all__ = ["inductance_matrix", "resistances", "self_inductances", "skin_depth"]
