"""The physics: partial inductance and resistance of every segment.

Partial element equivalent circuit method (A. E. Ruehli, "Inductance
calculations in a complex integrated circuit environment", IBM J. Res. Dev.
16(5), 1972; "Equivalent circuit models for three-dimensional multiconductor
systems", IEEE Trans. MTT 22(3), 1974). SI units throughout.
"""

from parasite.extract.couplings import CouplingSelection, choose_couplings, format_k
from parasite.extract.matrix import inductance_matrix
from parasite.extract.resistance import resistances, skin_depth

__all__ = ["CouplingSelection", "choose_couplings", "format_k", "inductance_matrix", "resistances",
           "skin_depth"]
