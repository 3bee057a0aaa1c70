"""Compiled (numba) sum of the Biot-Savart field of many filaments at many
points: the formula of :func:`parasite.field.biot_savart.filament_kernel`,
images and shielding included, one pass over (points x filaments) without
temporary arrays, parallel over the points. numba is optional: without it
:func:`available` is False and the numpy blocks are used.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from parasite.extract.filaments import MU0_4PI

try:  # pragma: no cover - depends on the installation
    import numba

    _HAVE_NUMBA = True
except ImportError:  # pragma: no cover
    numba = None  # type: ignore[assignment]
    _HAVE_NUMBA = False

_compiled: Any = None


def available() -> bool:
    """True when numba is installed."""
    return _HAVE_NUMBA


def _kernel(px: float, py: float, pz: float, sx: float, sy: float, sz: float,
            dx: float, dy: float, dz: float) -> tuple[float, float, float]:
    ax, ay, az = px - sx, py - sy, pz - sz
    ra2 = ax * ax + ay * ay + az * az
    adl = ax * dx + ay * dy + az * dz
    rb2 = ra2 - 2.0 * adl + (dx * dx + dy * dy + dz * dz)
    ra = math.sqrt(ra2)
    rb = math.sqrt(max(rb2, 0.0))
    rab = ra * rb
    cx = dy * az - dz * ay
    cy = dz * ax - dx * az
    cz = dx * ay - dy * ax
    c2 = cx * cx + cy * cy + cz * cz
    if c2 <= 1e-24 * (rab * rab + 1e-300):
        return 0.0, 0.0, 0.0
    f = MU0_4PI * (ra + rb) * (rab - (ra2 - adl)) / (rab * c2)
    return f * cx, f * cy, f * cz


def _field_sum(pts: np.ndarray, s: np.ndarray, e: np.ndarray, wr: np.ndarray, wi: np.ndarray,
               zm: np.ndarray, zs: np.ndarray, out: np.ndarray) -> None:
    n_p, n_f = pts.shape[0], s.shape[0]
    for p in numba.prange(n_p):
        px, py, pz = pts[p, 0], pts[p, 1], pts[p, 2]
        bxr = byr = bzr = bxi = byi = bzi = 0.0
        for f in range(n_f):
            dx, dy, dz = e[f, 0] - s[f, 0], e[f, 1] - s[f, 1], e[f, 2] - s[f, 2]
            kx, ky, kz = kernel(px, py, pz, s[f, 0], s[f, 1], s[f, 2], dx, dy, dz)
            z = zm[f]
            if not math.isnan(z):
                if (pz - z) * (zs[f] - z) <= 0.0:
                    continue
                # image: mirrored geometry, factor -1 (parasite.extract.images)
                ix, iy, iz = kernel(px, py, pz, s[f, 0], s[f, 1], 2.0 * z - s[f, 2], dx, dy, -dz)
                kx -= ix
                ky -= iy
                kz -= iz
            bxr += kx * wr[f]
            byr += ky * wr[f]
            bzr += kz * wr[f]
            bxi += kx * wi[f]
            byi += ky * wi[f]
            bzi += kz * wi[f]
        out[p, 0] = bxr
        out[p, 1] = byr
        out[p, 2] = bzr
        out[p, 3] = bxi
        out[p, 4] = byi
        out[p, 5] = bzi


kernel: Any = _kernel


def field_sum(pts: np.ndarray, s: np.ndarray, e: np.ndarray, weight: np.ndarray,
              zm: np.ndarray, zs: np.ndarray) -> np.ndarray:
    """Sum over filaments ``s`` -> ``e`` (F, 3) m of ``weight`` (F,) A (complex)
    times the field per ampere at ``pts`` (P, 3) m, with images in the planes at
    ``zm`` (F,) m (NaN: none) and no field on a plane's far side (``zs``: the
    height of each filament's segment). Returns (P, 3) complex T."""
    global _compiled, kernel
    if _compiled is None:
        kernel = numba.njit(cache=False, inline="always")(_kernel)
        _compiled = numba.njit(parallel=True, cache=False)(_field_sum)
    out = np.zeros((len(pts), 6))
    weight = np.asarray(weight, dtype=complex)
    _compiled(np.ascontiguousarray(pts, dtype=float), np.ascontiguousarray(s, dtype=float),
              np.ascontiguousarray(e, dtype=float), np.ascontiguousarray(weight.real),
              np.ascontiguousarray(weight.imag), np.ascontiguousarray(zm, dtype=float),
              np.ascontiguousarray(zs, dtype=float), out)
    return out[:, :3] + 1j * out[:, 3:]
