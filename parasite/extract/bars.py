"""Partial inductance of rectangular bars with uniform current, vectorised.

Two parallel bars share a frame: x along their axes, y along the widths, z along
the thicknesses. Bar 1 spans x in [a0, a1], bar 2 spans [b0, b1]; their centre
lines are ``dy``, ``dz`` apart (bar 2 minus bar 1); widths w1, w2 and thicknesses
t1, t2. All lengths in m, results in H, currents in the +x direction for both.

Exact result (Hoer & Love, "Exact inductance equations for rectangular
conductors with applications to more complicated geometries", J. Res. NBS 69C(2),
1965; Ruehli, IBM J. Res. Dev. 16(5), 1972)::

    M = mu0/(4 pi) / (w1 t1 w2 t2) * sum_ijk (-1)^(i+j+k+1) F(x_i, y_j, z_k)

with the corner differences x_i, y_j, z_k and Hoer & Love's function F (see
:func:`hoer_love_f`). The alternating sum loses about ``4 log10(L/h)`` digits
in float64 (L the largest distance, h the smallest bar dimension). It is
therefore evaluated in a form that keeps its precision:

* the length direction is split off: ``M = mu0/(4 pi) sum_i s_i Psi(x_i)`` with
  ``Psi(x) = E[g(x, rho)]``, the mean over the two cross-sections of the
  filament function ``g`` (:mod:`parasite.extract.filaments`);
* for |x| >= X* = 8 rho_max, ``Psi`` is its convergent series in rho/|x|
  (``E[ln rho]`` from the exact rectangle-to-rectangle geometric mean distance,
  Grover 1946, geometric mean distances; Hoer & Love 1965 in two dimensions; ``E[rho^2k]`` exact);
* for |x| < X*, ``Psi`` is Hoer & Love's cross-section sum, anchored to the
  series at X* (both are even in x, so they differ by a constant only).

Bars far apart (centre distance >= ``FAR_RATIO`` times the largest cross-section
dimension) use the centre filament with its second-moment correction over the
cross-sections (a Taylor expansion of the filament formula; its remainder is
fourth order in h/rho and is bounded by the sweep test against mpmath).
"""

from __future__ import annotations

import numpy as np

from parasite.extract.filaments import CORNER_SIGNS, MU0_4PI, corner_differences, g_parallel

FAR_RATIO = 8.0
"""Centre distance / largest cross-section dimension above which parallel bars use
the moment-corrected filament formula (chosen by the sweep in tests/extract/test_extract_bars.py,
which shows relative error <= 1e-4 on both sides of the switch)."""

SERIES_RATIO = 8.0
"""|x| / rho_max above which the length-direction series replaces the exact sum."""


def hoer_love_f(x: np.ndarray, y: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Hoer & Love (1965): F with d^6 F/(dx^2 dy^2 dz^2) = 1/sqrt(x^2+y^2+z^2) (m^5).

    Even in each argument; evaluated on absolute values, limits taken where a
    prefactor vanishes.
    """
    x, y, z = np.abs(x), np.abs(y), np.abs(z)
    x2, y2, z2 = x * x, y * y, z * z
    r = np.sqrt(x2 + y2 + z2)
    with np.errstate(divide="ignore", invalid="ignore"):
        def lg(a: np.ndarray, b2: np.ndarray, c2: np.ndarray) -> np.ndarray:
            den = np.sqrt(b2 + c2)
            return np.where(den > 0, a * np.arcsinh(a / den), 0.0)

        def at(num: np.ndarray, c: np.ndarray) -> np.ndarray:
            return np.where(c * r > 0, np.arctan(num / (c * r)), 0.0)

        val = (y2 * z2 / 4 - y2 * y2 / 24 - z2 * z2 / 24) * lg(x, y2, z2)
        val = val + (x2 * z2 / 4 - x2 * x2 / 24 - z2 * z2 / 24) * lg(y, x2, z2)
        val = val + (x2 * y2 / 4 - x2 * x2 / 24 - y2 * y2 / 24) * lg(z, x2, y2)
        val = val + (x2 * x2 + y2 * y2 + z2 * z2 - 3 * x2 * y2 - 3 * y2 * z2 - 3 * x2 * z2) * r / 60
        val = val - x * y * z * (z2 * at(x * y, z) + y2 * at(x * z, y) + x2 * at(y * z, x)) / 6
    return val


def rect_log_kernel(y: np.ndarray, z: np.ndarray) -> np.ndarray:
    """G with d^4 G/(dy^2 dz^2) = ln sqrt(y^2 + z^2) (m^4): the two-dimensional
    analogue of :func:`hoer_love_f`, giving the geometric mean distance of
    rectangles (Grover 1946, geometric mean distances; Hoer & Love 1965). Even in both arguments.

    ``G = (6 y^2 z^2 - y^4 - z^4) ln(y^2+z^2)/48 + (y^3 z atan(z/y) + y z^3 atan(y/z))/6
    - 25 y^2 z^2 / 48``.
    """
    y, z = np.abs(y), np.abs(z)
    y2, z2 = y * y, z * z
    s = y2 + z2
    with np.errstate(divide="ignore", invalid="ignore"):
        lg = np.where(s > 0, (6 * y2 * z2 - y2 * y2 - z2 * z2) * np.log(s) / 48, 0.0)
        at = np.where((y > 0) & (z > 0),
                      (y2 * y * z * np.arctan(z / y) + y * z2 * z * np.arctan(y / z)) / 6, 0.0)
    return lg + at - 25 * y2 * z2 / 48


def mean_log_distance(dy: np.ndarray, dz: np.ndarray, w1: np.ndarray, t1: np.ndarray,
                      w2: np.ndarray, t2: np.ndarray) -> np.ndarray:
    """E[ln rho] over two rectangles w1 x t1 and w2 x t2 whose centres are (dy, dz) apart:
    the log of their geometric mean distance (ln m). Exact corner sum of
    :func:`rect_log_kernel`."""
    yd = corner_differences(-w1 / 2, w1 / 2, dy - w2 / 2, dy + w2 / 2)  # (..., 4)
    zd = corner_differences(-t1 / 2, t1 / 2, dz - t2 / 2, dz + t2 / 2)
    g = rect_log_kernel(yd[..., :, None], zd[..., None, :])
    tot = np.einsum("i,j,...ij->...", CORNER_SIGNS, CORNER_SIGNS, g)
    return tot / (w1 * t1 * w2 * t2)


def _axis_moments(d: np.ndarray, m2: np.ndarray, m4: np.ndarray,
                  m6: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """E[Y^2], E[Y^4], E[Y^6] for Y = d + u, u symmetric with moments m2, m4, m6."""
    d2 = d * d
    return (d2 + m2, d2 * d2 + 6 * d2 * m2 + m4, d2 * d2 * d2 + 15 * d2 * d2 * m2 + 15 * d2 * m4 + m6)


def _uniform_difference_moments(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, ...]:
    """Moments E[u^2], E[u^4], E[u^6] of u = U_a - U_b, U uniform on [-a/2, a/2], [-b/2, b/2]."""
    a2, b2 = a * a, b * b
    e2a, e2b = a2 / 12, b2 / 12
    e4a, e4b = a2 * a2 / 80, b2 * b2 / 80
    e6a, e6b = a2 * a2 * a2 / 448, b2 * b2 * b2 / 448
    return (e2a + e2b, e4a + 6 * e2a * e2b + e4b, e6a + 15 * e4a * e2b + 15 * e2a * e4b + e6b)


def _psi_series(a: np.ndarray, lnrho: np.ndarray, r2: np.ndarray, r4: np.ndarray,
                r6: np.ndarray) -> np.ndarray:
    """E[g(a, rho)] for a = |x| >> rho (m): the series
    a ln(2a) - a - a E[ln rho] - E[rho^2]/(4a) + E[rho^4]/(32 a^3) - E[rho^6]/(96 a^5);
    the coefficients are those of asinh(1/e) - sqrt(1+e^2) + ln(e/2) in powers of e."""
    with np.errstate(divide="ignore", invalid="ignore"):
        ia = 1.0 / a
        ia2 = ia * ia
        val = a * (np.log(2 * a) - 1.0 - lnrho) - ia * (r2 / 4 - ia2 * (r4 / 32 - ia2 * r6 / 96))
    return np.where(a > 0, val, 0.0)


def parallel_bars_near(a0: np.ndarray, a1: np.ndarray, b0: np.ndarray, b1: np.ndarray,
                       dy: np.ndarray, dz: np.ndarray, w1: np.ndarray, t1: np.ndarray,
                       w2: np.ndarray, t2: np.ndarray) -> np.ndarray:
    """Mutual inductance (H) of two parallel bars, exact (Hoer & Love 1965)
    evaluated without loss of precision (module docstring). 1-D arrays, one per pair.
    The self inductance of a bar is the case of a bar with itself."""
    arrs = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                 (a0, a1, b0, b1, dy, dz, w1, t1, w2, t2)))
    a0, a1, b0, b1, dy, dz, w1, t1, w2, t2 = (np.atleast_1d(v) for v in arrs)
    area = w1 * t1 * w2 * t2
    my = _uniform_difference_moments(w1, w2)
    mz = _uniform_difference_moments(t1, t2)
    y2, y4, y6 = _axis_moments(dy, *my)
    z2, z4, z6 = _axis_moments(dz, *mz)
    r2 = y2 + z2
    r4 = y4 + 2 * y2 * z2 + z4
    r6 = y6 + 3 * y4 * z2 + 3 * y2 * z4 + z6
    lnrho = mean_log_distance(dy, dz, w1, t1, w2, t2)
    rho_max = np.hypot(np.abs(dy) + (w1 + w2) / 2, np.abs(dz) + (t1 + t2) / 2)
    xstar = SERIES_RATIO * rho_max

    x = np.abs(corner_differences(a0, a1, b0, b1))  # (n, 4)
    psi = _psi_series(x, lnrho[:, None], r2[:, None], r4[:, None], r6[:, None])
    near = x < xstar[:, None]
    rows = np.nonzero(near.any(axis=1))[0]
    if rows.size:
        # exact cross-section sums at the near corners and at the anchor X*
        yd = corner_differences(-w1[rows] / 2, w1[rows] / 2, dy[rows] - w2[rows] / 2,
                                dy[rows] + w2[rows] / 2)
        zd = corner_differences(-t1[rows] / 2, t1[rows] / 2, dz[rows] - t2[rows] / 2,
                                dz[rows] + t2[rows] / 2)
        sub_near = near[rows]
        r_idx, c_idx = np.nonzero(sub_near)
        xs = np.concatenate([x[rows][r_idx, c_idx], xstar[rows]])
        owner = np.concatenate([r_idx, np.arange(rows.size)])
        phi = _cross_section_sum(xs, yd[owner], zd[owner]) / area[rows][owner]
        phi_near, phi_star = phi[: r_idx.size], phi[r_idx.size:]
        anchor = _psi_series(xstar[rows], lnrho[rows], r2[rows], r4[rows], r6[rows]) - phi_star
        vals = psi[rows]
        vals[r_idx, c_idx] = phi_near + anchor[r_idx]
        psi[rows] = vals
    return MU0_4PI * np.sum(CORNER_SIGNS * psi, axis=-1)


def _cross_section_sum(x: np.ndarray, yd: np.ndarray, zd: np.ndarray) -> np.ndarray:
    """sum_jk s_j s_k F(x, y_j, z_k) for each x (m^5); yd, zd of shape (n, 4)."""
    f = hoer_love_f(x[:, None, None], yd[:, :, None], zd[:, None, :])
    return np.einsum("j,k,njk->n", CORNER_SIGNS, CORNER_SIGNS, f)


def parallel_filaments_corrected(a0: np.ndarray, a1: np.ndarray, b0: np.ndarray, b1: np.ndarray,
                                 dy: np.ndarray, dz: np.ndarray, m2y: np.ndarray,
                                 m2z: np.ndarray, m4_iso: np.ndarray | None = None
                                 ) -> np.ndarray:
    """Mutual inductance (H) of parallel conductors far apart: the centre filaments
    (Grover 1946, parallel filaments) plus the second-moment correction over the cross-sections,
    ``0.5 (m2y d2g/dy2 + m2z d2g/dz2)`` per corner term, with m2y, m2z (m^2) the
    variances of the difference of two points of the cross-sections along y and z
    (w^2/12 per bar of width w; (r_o^2 + r_i^2)/4 per round conductor). Needs
    hypot(dy, dz) well above the cross-section size (module docstring).

    For two round sections (isotropic, m2y = m2z) the mean of g over the difference
    vector u is the series sum_n E|u|^(2n) / (4^n n!^2) lap^n g (mean-value expansion in
    the plane); ``m4_iso`` = E|u|^4 adds its fourth-order term, with lap g = -1/R and
    lap^2 g = -(rho^2 - 2 x^2)/R^5."""
    x = corner_differences(a0, a1, b0, b1)
    rho = np.hypot(dy, dz)[..., None]
    y2 = (dy * dy)[..., None]
    z2 = (dz * dz)[..., None]
    r = np.hypot(x, rho)
    x2 = x * x
    r_minus = x2 / (r + rho)  # R - rho
    inv_minus = -x2 / ((r + rho) * r * rho)  # 1/R - 1/rho
    rho2 = rho * rho
    corr = (-(m2y[..., None] * y2 + m2z[..., None] * z2) / (2 * rho2) * inv_minus
            + (m2y - m2z)[..., None] * (y2 - z2) / (2 * rho2 * rho2) * r_minus)
    val = g_parallel(x, rho) + corr
    if m4_iso is not None:
        r5 = r * r * r * r * r
        val = val - (m4_iso[..., None] / 64) * (rho2 - 2 * x2) / r5
    return MU0_4PI * np.sum(CORNER_SIGNS * val, axis=-1)


def parallel_bars(a0: np.ndarray, a1: np.ndarray, b0: np.ndarray, b1: np.ndarray,
                  dy: np.ndarray, dz: np.ndarray, w1: np.ndarray, t1: np.ndarray,
                  w2: np.ndarray, t2: np.ndarray) -> np.ndarray:
    """Mutual inductance (H) of parallel bars in any relative position: exact near,
    moment-corrected filaments far (switch at ``FAR_RATIO``)."""
    arrs = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                 (a0, a1, b0, b1, dy, dz, w1, t1, w2, t2)))
    a0, a1, b0, b1, dy, dz, w1, t1, w2, t2 = (np.atleast_1d(v) for v in arrs)
    h = np.maximum(np.maximum(w1, w2), np.maximum(t1, t2))
    far = np.hypot(dy, dz) >= FAR_RATIO * h
    out = np.empty(a0.shape)
    if np.any(far):
        m2y = (w1[far] ** 2 + w2[far] ** 2) / 12
        m2z = (t1[far] ** 2 + t2[far] ** 2) / 12
        out[far] = parallel_filaments_corrected(a0[far], a1[far], b0[far], b1[far],
                                                dy[far], dz[far], m2y, m2z)
    nf = ~far
    if np.any(nf):
        out[nf] = parallel_bars_near(a0[nf], a1[nf], b0[nf], b1[nf], dy[nf], dz[nf],
                                     w1[nf], t1[nf], w2[nf], t2[nf])
    return out


def bar_self_inductance(length: np.ndarray, width: np.ndarray,
                        thickness: np.ndarray) -> np.ndarray:
    """Partial self inductance (H) of a straight rectangular bar with uniform current:
    the exact result (Hoer & Love 1965 with both bars the same; Ruehli 1972; Piatek &
    Baron, PIER M 26, 2012), evaluated without loss of precision."""
    length = np.asarray(length, dtype=float)
    zero = np.zeros_like(length)
    return parallel_bars_near(zero, length, zero, length, zero, zero, width, thickness,
                              width, thickness)
