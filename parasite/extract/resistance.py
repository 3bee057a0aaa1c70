"""Resistance of segments: DC with the temperature correction, and a skin-effect
estimate at a given frequency.

DC: R = rho(T) l / A with rho(T) = rho_20 (1 + alpha (T - 20 degC)) and, by
default, annealed copper per IEC 60028 (1925): rho_20 = 1/58 ohm mm^2/m =
1.7241e-8 ohm m, alpha = 0.00393 /K.

Skin effect: the current is taken as uniform in a shell one skin depth thick
under the surface, delta = sqrt(rho / (pi f mu0 mu_r)) (Ramo, Whinnery & Van
Duzer, *Fields and Waves in Communication Electronics*, 3rd ed., 1994, sec.
3.16; the shell model for wires and for rectangular lands: C. R. Paul,
*Introduction to Electromagnetic Compatibility*, 2nd ed., 2006, sec. 4.2). The
shell's area is min(the full section, the outer section less the section
shrunk by delta on every side), so the estimate meets the DC value when
delta exceeds half the thickness. It ignores current crowding toward a return
plane and the proximity effect: an estimate of the increase, not a field
solution.
"""

from __future__ import annotations

import math

import numpy as np

from geometry.model import Copper, SegmentArrays
from parasite.errors import ExtractionError

MU0 = 4e-7 * math.pi  # H/m


def skin_depth(resistivity: float, frequency: float, mu_r: float = 1.0) -> float:
    """delta = sqrt(rho / (pi f mu0 mu_r)) in m; rho in ohm m, f in Hz (> 0)."""
    if not (frequency > 0 and resistivity > 0 and mu_r > 0):
        raise ExtractionError(
            f"skin depth needs a positive frequency, resistivity and relative permeability; "
            f"got {frequency!r} Hz, {resistivity!r} ohm*m, mu_r {mu_r!r}", key="frequency")
    return math.sqrt(resistivity / (math.pi * frequency * MU0 * mu_r))


def conducting_area(arrays: SegmentArrays, delta: float | None) -> np.ndarray:
    """Cross-section (m^2) that carries the current: the whole section at DC
    (``delta`` None), else the shell of thickness ``delta`` under the surface."""
    bar = ~arrays.round
    area = np.where(bar, arrays.width * arrays.thickness,
                    np.pi * (arrays.radius**2 - arrays.inner_radius**2))
    if delta is None:
        return area
    w_in = np.clip(arrays.width - 2 * delta, 0.0, None)
    t_in = np.clip(arrays.thickness - 2 * delta, 0.0, None)
    shell_bar = arrays.width * arrays.thickness - w_in * t_in
    r_in = np.maximum(arrays.radius - delta, arrays.inner_radius)
    shell_round = np.pi * (arrays.radius**2 - r_in**2)
    return np.minimum(area, np.where(bar, shell_bar, shell_round))


def resistances(arrays: SegmentArrays, copper: Copper, frequency: float | None = None) -> np.ndarray:
    """Series resistance of every segment in ohm, at DC (``frequency`` None) or
    at ``frequency`` Hz with the skin-effect shell estimate."""
    rho = copper.resistivity_at_temperature
    delta = None if frequency is None or frequency <= 0 else skin_depth(rho, frequency)
    return rho * arrays.length / conducting_area(arrays, delta)
