"""Mean logarithmic distance between two cells of a conductor's cross-section.

The per-unit-length partial inductance of two long parallel filaments of
cross-sections A_i and A_j, each carrying a uniform current, is (2D
magneto-quasistatics, reference distance 1 m)::

    L'_ij = -mu0/(2 pi) * G_ij,   G_ij = 1/(A_i A_j) Int_Ai Int_Aj ln|r - r'| dA dA'    (H/m)

G_ij is the logarithm of the geometric mean distance (Maxwell, *A Treatise on
Electricity and Magnetism*, 1873, vol. 2, art. 691-692; the filament method for the
skin effect in rectangular conductors: W. T. Weeks, L. L. Wu, M. F. McAllister,
A. Singh, "Resistive and inductive skin effect in rectangular conductors", IBM J.
Res. Dev. 23(6), 1979). Three ways, all in m (lengths) and dimensionless (G):

* axis-aligned rectangles: exact, from the fourth antiderivative F with
  d^4F/(dx^2 dy^2) = ln sqrt(x^2 + y^2),
  ``F = -(x^4 - 6x^2y^2 + y^4) ln(x^2+y^2)/48 + xy(x^2 atan(y/x) + y^2 atan(x/y))/6
  - 25 x^2 y^2/48`` (derived here; checked against quadrature in the tests), summed over
  the 4 x 4 corners; far pairs use the centroid distance with the second-moment
  correction ``(sx^2 - sy^2)(dy^2 - dx^2)/(2 d^4)`` (Taylor expansion of ln, harmonic in
  2D), whose error is O((size/d)^4);
* annular sectors of one round conductor (same centre): exact, from the expansion
  ``ln|r - r'| = ln r> - sum_m (1/m)(r</r>)^m cos m(theta - theta')`` (e.g. Jackson,
  *Classical Electrodynamics*, 3rd ed., 1999, sec. 2.11) averaged over the cells;
* any other pair (round with rectangle, two round conductors): Gauss-Legendre
  quadrature over both cells (accurate when the cells are farther apart than
  their size).
"""

from __future__ import annotations

import numpy as np

from parasite.extract.filaments import CORNER_SIGNS, corner_differences, gauss_legendre

FAR_RATIO = 8.0
"""Pairs of rectangles whose centroid distance exceeds FAR_RATIO times the larger
diagonal use the corrected centroid form (error below 1e-5 in G)."""


def _f4(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """The fourth antiderivative F(x, y) of ln sqrt(x^2 + y^2) (m^4 ln m); F(0, y) and
    F(x, 0) are the continuous limits."""
    x2, y2 = x * x, y * y
    r2 = x2 + y2
    with np.errstate(divide="ignore", invalid="ignore"):
        lg = np.where(r2 > 0, np.log(r2), 0.0)
        at_y = np.where(x != 0, np.arctan(y / x), 0.0)
        at_x = np.where(y != 0, np.arctan(x / y), 0.0)
    return (-(x2 * x2 - 6 * x2 * y2 + y2 * y2) * lg / 48 + x * y * (x2 * at_y + y2 * at_x) / 6
            - 25 * x2 * y2 / 48)


def rect_logmean(xa: np.ndarray, ya: np.ndarray, wa: np.ndarray, ha: np.ndarray,
                 xb: np.ndarray, yb: np.ndarray, wb: np.ndarray, hb: np.ndarray) -> np.ndarray:
    """G (module docstring) of axis-aligned rectangles centred at (xa, ya), (xb, yb) with
    widths w (along x) and heights h (along y), all in m; arrays broadcast together."""
    xa, ya, wa, ha, xb, yb, wb, hb = np.broadcast_arrays(
        *(np.asarray(v, dtype=float) for v in (xa, ya, wa, ha, xb, yb, wb, hb)))
    dx, dy = xb - xa, yb - ya
    d2 = dx * dx + dy * dy
    size2 = np.maximum(wa * wa + ha * ha, wb * wb + hb * hb)
    far = d2 > FAR_RATIO**2 * size2
    out = np.empty(dx.shape)
    if np.any(far):
        sx2 = (wa[far] ** 2 + wb[far] ** 2) / 12
        sy2 = (ha[far] ** 2 + hb[far] ** 2) / 12
        dd = d2[far]
        out[far] = 0.5 * np.log(dd) + (sx2 - sy2) * (dy[far] ** 2 - dx[far] ** 2) / (2 * dd * dd)
    near = ~far
    if np.any(near):
        # coordinates relative to rectangle a's lower-left corner keep the corner sums small
        u = corner_differences(np.zeros(np.count_nonzero(near)), wa[near],
                               dx[near] + 0.5 * (wa[near] - wb[near]),
                               dx[near] + 0.5 * (wa[near] + wb[near]))
        v = corner_differences(np.zeros(np.count_nonzero(near)), ha[near],
                               dy[near] + 0.5 * (ha[near] - hb[near]),
                               dy[near] + 0.5 * (ha[near] + hb[near]))
        f = _f4(u[:, :, None], v[:, None, :])
        s = CORNER_SIGNS[:, None] * CORNER_SIGNS[None, :]
        out[near] = np.sum(s * f, axis=(1, 2)) / (wa[near] * ha[near] * wb[near] * hb[near])
    return out


def _ring_moment_same(a: np.ndarray, b: np.ndarray, m: np.ndarray) -> np.ndarray:
    """E[(r</r>)^m] for r, r' independent and uniform (by area) on the annulus a <= r <= b
    (m > 0 integers as floats; closed form of the double radial integral)."""
    a = np.asarray(a, dtype=float)[..., None]
    b = np.asarray(b, dtype=float)[..., None]
    q = np.where(b > 0, a / b, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        tail = np.where(m == 2, a**4 * np.log(np.where(a > 0, b / np.where(a > 0, a, 1.0), 1.0)),
                        a**4 * (1 - q ** (m - 2)) / (m - 2))
    tail = np.where(a > 0, tail, 0.0)
    return 8 / ((b * b - a * a) ** 2 * (m + 2)) * ((b**4 - a**4) / 4 - tail)


def _ring_moment_pair(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray,
                      m: np.ndarray) -> np.ndarray:
    """E[(r/r')^m] for r uniform on annulus [a, b] inside r' uniform on annulus [c, d],
    b <= c (m > 0): the product E[(r/b)^m] E[(b/r')^m], each in closed form."""
    a, b, c, d = (np.asarray(v, dtype=float)[..., None] for v in (a, b, c, d))
    inner = 2 * b * b * (1 - (a / b) ** (m + 2)) / ((b * b - a * a) * (m + 2))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        outer = np.where(m == 2, 2 * b * b * np.log(d / c) / (d * d - c * c),
                         2 * (d * d * (b / d) ** m - c * c * (b / c) ** m) / ((2 - m) * (d * d - c * c)))
    return inner * outer


def _ring_log_same(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """E[ln max(r, r')] for r, r' independent, uniform on annulus [a, b] (Gauss-Legendre
    on the single radial integral of ln r times the density of the maximum)."""
    x, w = gauss_legendre(24)
    a, b = np.asarray(a, dtype=float)[..., None], np.asarray(b, dtype=float)[..., None]
    r = a + (b - a) * 0.5 * (x + 1)
    dens = 4 * r * (r * r - a * a) / (b * b - a * a) ** 2
    return np.sum(0.5 * (b - a) * w * np.log(r) * dens, axis=-1)


def _ring_log_mean(c: np.ndarray, d: np.ndarray) -> np.ndarray:
    """E[ln r] for r uniform on annulus [c, d] (Gauss-Legendre)."""
    x, w = gauss_legendre(24)
    c, d = np.asarray(c, dtype=float)[..., None], np.asarray(d, dtype=float)[..., None]
    r = c + (d - c) * 0.5 * (x + 1)
    return np.sum(0.5 * (d - c) * w * np.log(r) * 2 * r / (d * d - c * c), axis=-1)


def disc_logmean(edges: np.ndarray, sectors: int, harmonics: int | None = None) -> np.ndarray:
    """G between all cells of a round conductor cut into annuli ``edges[i]..edges[i+1]`` (m,
    increasing, edges[0] >= 0) and ``sectors`` equal angular sectors.

    Returns shape (n_layers, n_layers, sectors): G[i, j, k] for layer i, layer j, sector
    offset k. Exact up to the truncation of the harmonic series after ``harmonics``
    terms (default 400 per sector; the tail falls like 1/m^3 through the sector average
    sinc^2(m pi/sectors))."""
    edges = np.asarray(edges, dtype=float)
    lo, hi = edges[:-1], edges[1:]
    n = lo.size
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    inner, outer = np.minimum(i, j), np.maximum(i, j)
    same = i == j
    log_part = np.where(same, _ring_log_same(lo, hi)[i], _ring_log_mean(lo, hi)[outer])
    out = np.broadcast_to(log_part[..., None], (n, n, sectors)).copy()
    if sectors == 1:
        return out
    big_m = harmonics or 400 * sectors
    m = np.arange(1, big_m + 1, dtype=float)
    half = np.pi / sectors
    sinc2 = (np.sin(m * half) / (m * half)) ** 2
    moments = np.where(same[..., None], _ring_moment_same(lo, hi, m)[i],
                       _ring_moment_pair(lo[inner], hi[inner], lo[outer], hi[outer], m))
    phase = np.cos(np.outer(m, 2 * half * np.arange(sectors)))  # (M, sectors)
    out -= np.einsum("ijm,mk->ijk", moments * (sinc2 / m), phase)
    return out


def quadrature_points(kind: np.ndarray, geom: np.ndarray, order: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """Gauss points (n, order^2, 2) in m and weights (n, order^2) summing to 1 for cells
    given as rows of ``geom``: rectangles (kind 0: cx, cy, w, h) and annular sectors
    (kind 1: centre x, centre y, r0, r1, theta0, theta1)."""
    x, w = gauss_legendre(order)
    s = 0.5 * (x + 1)
    ww = 0.5 * w
    pts = np.empty((geom.shape[0], order * order, 2))
    wts = np.empty((geom.shape[0], order * order))
    rect = kind == 0
    g = geom[rect]
    px = g[:, 0, None, None] + (s[None, :, None] - 0.5) * g[:, 2, None, None] + 0 * s[None, None, :]
    py = g[:, 1, None, None] + (s[None, None, :] - 0.5) * g[:, 3, None, None] + 0 * s[None, :, None]
    if len(g):
        pts[rect] = np.stack([px.reshape(len(g), -1), py.reshape(len(g), -1)], axis=-1)
        wts[rect] = np.outer(ww, ww).reshape(-1)
    g = geom[~rect]
    r = g[:, 2, None] + (g[:, 3] - g[:, 2])[:, None] * s[None, :]  # (n, q)
    th = g[:, 4, None] + (g[:, 5] - g[:, 4])[:, None] * s[None, :]
    px = g[:, 0, None, None] + r[:, :, None] * np.cos(th[:, None, :])
    py = g[:, 1, None, None] + r[:, :, None] * np.sin(th[:, None, :])
    if len(g):
        pts[~rect] = np.stack([px.reshape(len(g), -1), py.reshape(len(g), -1)], axis=-1)
        wr = ww[None, :] * r
        wq = (wr[:, :, None] * ww[None, None, :]).reshape(len(g), -1)
        wts[~rect] = wq / wq.sum(axis=1, keepdims=True)
    return pts, wts


def quadrature_logmean(pa: np.ndarray, wa: np.ndarray, pb: np.ndarray, wb: np.ndarray,
                       chunk: int = 4096) -> np.ndarray:
    """G by quadrature: points (n, q, 2), weights (n, q) of two cell lists, pairwise (n,);
    ``chunk`` pairs at a time bound the memory."""
    out = np.empty(pa.shape[0])
    for s in range(0, pa.shape[0], chunk):
        sl = slice(s, s + chunk)
        diff = pa[sl, :, None, :] - pb[sl, None, :, :]
        lg = 0.5 * np.log(np.sum(diff * diff, axis=-1))
        out[sl] = np.einsum("nij,ni,nj->n", lg, wa[sl], wb[sl])
    return out
