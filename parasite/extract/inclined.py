"""Mutual inductance of straight conductors at a general angle, vectorised.

Each conductor's section is replaced by an n x n grid of Gauss-Legendre
filaments (width x thickness), and the mutual inductance is the weighted mean of
Neumann's formula in closed form over all filament pairs
(:func:`parasite.extract.filaments.filament_mutual`); this is the
filament-subdivision form of the partial element method (Ruehli, "Equivalent
circuit models for three-dimensional multiconductor systems", IEEE Trans. MTT
22(3), 1974). The order n is chosen from the distance between the conductors
relative to their section size (:data:`ORDER_TABLE`): relative error below 1e-4
for separated conductors; for conductors touching at a bend (the filament
integrand has kinks there and the rule converges only algebraically) about
2e-4 of the mutual term, i.e. a few 1e-5 of the self terms (checked in
tests/test_extract_inclined.py against scipy cubature over both sections). A
round section enters as the square with the same second moment (side
sqrt(3 (r_o^2 + r_i^2))), exact to second order.

Lengths in m, inductance in H.
"""

from __future__ import annotations

import numpy as np

from parasite.extract.filaments import filament_mutual

ORDER_TABLE: tuple[tuple[float, int], ...] = ((20.0, 1), (0.5, 2), (0.1, 4), (0.0, 8))
"""(minimum of distance / section size, Gauss-Legendre order per section dimension)."""

_CHUNK = 1_500_000  # filament pairs evaluated at once


def segment_distance(p1: np.ndarray, q1: np.ndarray, p2: np.ndarray,
                     q2: np.ndarray) -> np.ndarray:
    """Shortest distance (m) between segments p1-q1 and p2-q2, shapes (n, 3)."""
    d1, d2, r = q1 - p1, q2 - p2, p1 - p2
    a = np.einsum("ij,ij->i", d1, d1)
    e = np.einsum("ij,ij->i", d2, d2)
    f = np.einsum("ij,ij->i", d2, r)
    c = np.einsum("ij,ij->i", d1, r)
    b = np.einsum("ij,ij->i", d1, d2)
    denom = a * e - b * b
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.where(denom > 1e-12 * a * e, np.clip((b * f - c * e) / denom, 0.0, 1.0), 0.0)
        t = (b * s + f) / e
        s = np.where(t < 0, np.clip(-c / a, 0.0, 1.0), np.where(t > 1, np.clip((b - c) / a, 0.0, 1.0), s))
        t = np.clip(t, 0.0, 1.0)
    gap = p1 + s[:, None] * d1 - p2 - t[:, None] * d2
    return np.sqrt(np.einsum("ij,ij->i", gap, gap))


def choose_order(distance: np.ndarray, size: np.ndarray) -> np.ndarray:
    """Gauss-Legendre order per section dimension for each pair (:data:`ORDER_TABLE`)."""
    ratio = distance / size
    order = np.full(ratio.shape, ORDER_TABLE[-1][1])
    for limit, n in reversed(ORDER_TABLE):
        order = np.where(ratio >= limit, n, order)
    return order


def _grid(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Nodes (n*n, 2) on [-1/2, 1/2]^2 and weights summing to 1."""
    x, w = np.polynomial.legendre.leggauss(n)
    x, w = 0.5 * x, 0.5 * w
    nodes = np.stack(np.meshgrid(x, x, indexing="ij"), axis=-1).reshape(-1, 2)
    weights = np.outer(w, w).reshape(-1)
    return nodes, weights


def inclined_mutual(sa: np.ndarray, ea: np.ndarray, wa_dir: np.ndarray, ta_dir: np.ndarray,
                    wa: np.ndarray, ta: np.ndarray, sb: np.ndarray, eb: np.ndarray,
                    wb_dir: np.ndarray, tb_dir: np.ndarray, wb: np.ndarray, tb: np.ndarray,
                    order: np.ndarray) -> np.ndarray:
    """Mutual inductance (H) of pairs of bars at any angle, by ``order`` x ``order``
    Gauss-Legendre filaments per section (per pair). Points (n, 3) m, unit vectors
    along width and thickness (n, 3), dimensions (n,) m."""
    out = np.zeros(sa.shape[0])
    for n in np.unique(order):
        idx = np.nonzero(order == n)[0]
        nodes, weights = _grid(int(n))
        k = nodes.shape[0]
        ww = np.outer(weights, weights).reshape(-1)  # (k*k,)
        step = max(1, _CHUNK // (k * k))
        for c0 in range(0, idx.size, step):
            sel = idx[c0:c0 + step]
            oa = (nodes[None, :, 0, None] * (wa[sel, None, None] * wa_dir[sel, None, :])
                  + nodes[None, :, 1, None] * (ta[sel, None, None] * ta_dir[sel, None, :]))
            ob = (nodes[None, :, 0, None] * (wb[sel, None, None] * wb_dir[sel, None, :])
                  + nodes[None, :, 1, None] * (tb[sel, None, None] * tb_dir[sel, None, :]))
            pa = (sa[sel, None, None, :] + oa[:, :, None, :])
            qa = (ea[sel, None, None, :] + oa[:, :, None, :])
            pb = (sb[sel, None, None, :] + ob[:, None, :, :])
            qb = (eb[sel, None, None, :] + ob[:, None, :, :])
            m = filament_mutual(pa, qa, pb, qb).reshape(sel.size, -1)
            out[sel] = m @ ww
    return out
