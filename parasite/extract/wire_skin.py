"""Internal impedance of a solid round wire, exact (Bessel functions).

Inside a long round wire of radius a and conductivity sigma the axial current
density obeys J'' + J'/r + k^2 J = 0 with k = (1 - j)/delta, so J = C J0(k r) and,
with the external flux referenced to the wire's surface (Ramo, Whinnery & Van
Duzer, *Fields and Waves in Communication Electronics*, 3rd ed., 1994, sec. 3.16,
internal impedance of a round wire)::

    Z_int = k J0(k a) / (2 pi a sigma J1(k a))                 (ohm/m)

J0, J1 of complex argument from scipy.special.jve (scaled by exp(-|Im z|), the
scale cancels in the ratio). Limits: R -> R_dc = 1/(sigma pi a^2) and
L_int -> mu0/(8 pi) = 50 nH/m at DC; for a >> delta, R -> R_s/(2 pi a) with
R_s = 1/(sigma delta) and L_int -> R/w = mu0 delta/(4 pi a) -> 0, so the internal
inductance falls as 1/sqrt(f), toward 2 delta/a times its DC value: 87% of it at
a = 2 delta, 49% at a = 4 delta, 20% at a = 10 delta (this formula, evaluated).
"""

from __future__ import annotations

import numpy as np
from scipy import special

from parasite.extract.resistance import MU0


def round_wire_internal_impedance(radius: float, resistivity: float, frequency: np.ndarray) -> np.ndarray:
    """Z_int (ohm/m, complex) of a solid non-magnetic round wire; radius in m, resistivity in
    ohm m, frequency in Hz (0 gives the DC limit R_dc + j0)."""
    f = np.asarray(frequency, dtype=float)
    sigma = 1.0 / resistivity
    rdc = resistivity / (np.pi * radius**2)
    w = 2 * np.pi * f
    with np.errstate(divide="ignore", invalid="ignore"):
        delta = np.sqrt(2 / (w * MU0 * sigma))
        k = (1 - 1j) / delta
        ka = k * radius
        z = k * special.jve(0, ka) / (2 * np.pi * radius * sigma * special.jve(1, ka))
    # below |ka| = 1e-3 the ratio loses digits; there Z = R_dc + j w mu0/(8 pi) to O(|ka|^4)
    small = ~(np.abs(ka) > 1e-3)
    return np.where(small, rdc + 1j * w * MU0 / (8 * np.pi), z)


def internal_inductance(radius: float, resistivity: float, frequency: np.ndarray) -> np.ndarray:
    """Internal inductance per unit length (H/m) of a round wire: Im(Z_int)/w."""
    f = np.asarray(frequency, dtype=float)
    return round_wire_internal_impedance(radius, resistivity, f).imag / (2 * np.pi * f)
