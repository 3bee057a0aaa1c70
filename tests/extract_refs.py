"""Independent reference computations for the extraction tests (not the code under test).

* :func:`hoer_love_mp` evaluates Hoer & Love's exact corner sum for parallel bars
  (Hoer & Love, "Exact inductance equations for rectangular conductors with
  applications to more complicated geometries", J. Res. NBS 69C(2), 1965) in
  mpmath at high precision, written out here from the paper's formula.
* :func:`neumann_filament_np` is Neumann's double line integral for parallel or
  inclined filaments, with the inner integral done analytically and the outer
  one by scipy's adaptive quadrature.
* :func:`bars_cubature` integrates a filament formula over both cross-sections
  of two bars with scipy's adaptive cubature.
"""

from __future__ import annotations

import mpmath as mp
import numpy as np
from scipy import integrate


def _f_mp(x: mp.mpf, y: mp.mpf, z: mp.mpf) -> mp.mpf:
    x, y, z = abs(x), abs(y), abs(z)
    r = mp.sqrt(x * x + y * y + z * z)

    def lg(a: mp.mpf, b: mp.mpf, c: mp.mpf) -> mp.mpf:
        d = mp.sqrt(b * b + c * c)
        return a * mp.asinh(a / d) if d != 0 else mp.mpf(0)

    def at(n: mp.mpf, c: mp.mpf) -> mp.mpf:
        return mp.atan(n / (c * r)) if c * r != 0 else mp.mpf(0)

    t = (y * y * z * z / 4 - y**4 / 24 - z**4 / 24) * lg(x, y, z)
    t += (x * x * z * z / 4 - x**4 / 24 - z**4 / 24) * lg(y, x, z)
    t += (x * x * y * y / 4 - x**4 / 24 - y**4 / 24) * lg(z, x, y)
    t += (x**4 + y**4 + z**4 - 3 * x * x * y * y - 3 * y * y * z * z - 3 * x * x * z * z) * r / 60
    t -= x * y * z * (z * z * at(x * y, z) + y * y * at(x * z, y) + x * x * at(y * z, x)) / 6
    return t


def hoer_love_f_mp(x: float, y: float, z: float, dps: int = 40) -> mp.mpf:
    with mp.workdps(dps):
        return _f_mp(mp.mpf(x), mp.mpf(y), mp.mpf(z))


def hoer_love_mp(a0: float, a1: float, b0: float, b1: float, dy: float, dz: float,
                 w1: float, t1: float, w2: float, t2: float, dps: int = 60) -> float:
    """Mutual inductance (H) of parallel bars, exact corner sum in mpmath at ``dps`` digits."""
    with mp.workdps(dps):
        a0, a1, b0, b1, dy, dz, w1, t1, w2, t2 = (
            mp.mpf(v) for v in (a0, a1, b0, b1, dy, dz, w1, t1, w2, t2))

        def cd(p0: mp.mpf, p1: mp.mpf, q0: mp.mpf, q1: mp.mpf) -> list[tuple[mp.mpf, int]]:
            return [(q1 - p0, 1), (q1 - p1, -1), (q0 - p0, -1), (q0 - p1, 1)]

        s = mp.mpf(0)
        for x, sx in cd(a0, a1, b0, b1):
            for y, sy in cd(-w1 / 2, w1 / 2, dy - w2 / 2, dy + w2 / 2):
                for z, sz in cd(-t1 / 2, t1 / 2, dz - t2 / 2, dz + t2 / 2):
                    s += sx * sy * sz * _f_mp(x, y, z)
        return float(mp.mpf("1e-7") * s / (w1 * t1 * w2 * t2))


def neumann_filament_np(pa: np.ndarray, qa: np.ndarray, pb: np.ndarray, qb: np.ndarray) -> float:
    """Neumann's formula (H) for straight filaments: inner integral analytic
    (int dt / sqrt((t - c)^2 + a^2) = asinh), outer by scipy.integrate.quad."""
    pa, qa, pb, qb = (np.asarray(v, dtype=float) for v in (pa, qa, pb, qb))
    da, db = qa - pa, qb - pb
    lb = np.linalg.norm(db)
    ub = db / lb

    def inner(s: float) -> float:
        p = pa + s * da - pb
        c = float(p @ ub)
        a = float(np.sqrt(max(p @ p - c * c, 0.0)))
        if a == 0.0:
            return float(np.log(abs(lb - c)) - np.log(abs(c))) if c * (c - lb) > 0 else np.inf
        return float(np.arcsinh((lb - c) / a) - np.arcsinh(-c / a))

    val, _ = integrate.quad(inner, 0.0, 1.0, epsabs=0, epsrel=1e-12, limit=400)
    return float(1e-7 * (da @ db) / lb * val * 1.0)


def _inner_line(p0: np.ndarray, pb: np.ndarray, ub: np.ndarray, lb: float) -> np.ndarray:
    """int_0^lb dt / |p0 - (pb + t ub)| for points p0 (n, 3): asinh form."""
    p = p0 - pb
    c = p @ ub
    a = np.sqrt(np.maximum(np.einsum("ij,ij->i", p, p) - c * c, 1e-300))
    return np.arcsinh((lb - c) / a) - np.arcsinh(-c / a)


def neumann_bars_cubature(frame_a: tuple, frame_b: tuple, rtol: float = 1e-6) -> float:
    """Mutual inductance (H) of two straight bars with uniform current: Neumann's
    formula averaged over both cross-sections, as a five-fold integral (four
    cross-section coordinates and the position along bar a; the integral along
    bar b is done analytically) by scipy.integrate.cubature.

    A frame is (start, end, e_w, e_t, width, thickness): the centre line (m), unit
    vectors along width and thickness, and the two dimensions (m). Round
    conductors are not covered.
    """
    sa, ea, wa_dir, ta_dir, wa, ta = (np.asarray(v, dtype=float) for v in frame_a)
    sb, eb, wb_dir, tb_dir, wb, tb = (np.asarray(v, dtype=float) for v in frame_b)
    da, db = ea - sa, eb - sb
    lb = float(np.linalg.norm(db))
    ub = db / lb

    def f(u: np.ndarray) -> np.ndarray:
        oa = u[:, 0:1] * wa * wa_dir + u[:, 1:2] * ta * ta_dir
        ob = u[:, 2:3] * wb * wb_dir + u[:, 3:4] * tb * tb_dir
        p0 = sa + oa + u[:, 4:5] * da
        return _inner_line(p0, sb + ob, ub, lb)

    lo = np.array([-0.5, -0.5, -0.5, -0.5, 0.0])
    hi = np.array([0.5, 0.5, 0.5, 0.5, 1.0])
    res = integrate.cubature(f, lo, hi, rtol=rtol, atol=0.0, max_subdivisions=100000)
    return float(1e-7 * (da @ db) / lb * res.estimate)
