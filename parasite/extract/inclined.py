"""Mutual inductance of straight conductors at a general angle, vectorised.

Each conductor's section is replaced by an n x n grid of Gauss-Legendre
filaments (width x thickness), and the mutual inductance is the weighted mean of
Neumann's formula in closed form over all filament pairs
(:func:`parasite.extract.filaments.filament_mutual`); this is the
filament-subdivision form of the partial element method (Ruehli, "Equivalent
circuit models for three-dimensional multiconductor systems", IEEE Trans. MTT
22(3), 1974). The order n is chosen from the distance between the conductors
relative to their section size (:data:`ORDER_TABLE`): relative error below 1e-4
for separated conductors (checked in tests/extract/test_extract_inclined.py against
scipy cubature over both sections). Bars of one layer touching at a bend (the
filament integrand has kinks there, so the rule converges only algebraically)
use the height-difference rule of :func:`_same_layer_grids` with 20 points across
each width: below 4e-5 in the tests (bends of 30, 45 and 135 degrees, equal and
unequal widths). Touching bars of different layers or thicknesses (rare: a bend
is within one layer) fall back to 8 x 8 points per section, about 2e-4. A
round section enters as the square with the same second moment (side
sqrt(3 (r_o^2 + r_i^2))), exact to second order.

Lengths in m, inductance in H.
"""

from __future__ import annotations

import numpy as np

from parasite.extract.filaments import filament_mutual, gauss_legendre

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
    x, w = gauss_legendre(n)
    x, w = 0.5 * x, 0.5 * w
    nodes = np.stack(np.meshgrid(x, x, indexing="ij"), axis=-1).reshape(-1, 2)
    weights = np.outer(w, w).reshape(-1)
    return nodes, weights


SAME_LAYER_RULES: dict[int, tuple[int, int]] = {2: (2, 2), 4: (6, 2), 8: (20, 2)}
"""order -> (points across the width, points over the height difference) for bars of
one layer (:func:`_same_layer_grids`)."""


def _same_layer_grids(n_w: int, n_z: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Rules for two bars of one layer (same height and thickness t): the mutual
    inductance depends on the thicknesses only through the height difference dz of
    the two filaments, whose density is triangular, (t - |dz|)/t^2 on [-t, t], and is
    even in dz. So bar a gets n_w width points at its mid-height and bar b gets n_w
    width points times n_z points dz/t in [0, 1] with weights 2 (1 - s) (Gauss-Legendre
    on [0, 1], the kink of the integrand at dz = 0 sitting at an end of the interval);
    n_z = 1 is the single point dz = t/sqrt(6), exact for the even integrand to second
    order.
    Returns nodes and weights of a, then of b (nodes as fractions of width, thickness)."""
    x, w = gauss_legendre(n_w)
    x, w = 0.5 * x, 0.5 * w
    if n_z == 1:  # one height difference with the right second moment: E[dz^2] = t^2/6
        z, wz = np.array([1.0 / np.sqrt(6.0)]), np.array([1.0])
    else:
        z, wz = gauss_legendre(n_z)
        z, wz = 0.5 * (z + 1.0), 0.5 * wz * 2.0 * (1.0 - 0.5 * (z + 1.0))
        wz = wz / wz.sum()
    nodes_a = np.stack([x, np.zeros_like(x)], axis=-1)
    nodes_b = np.stack(np.meshgrid(x, z, indexing="ij"), axis=-1).reshape(-1, 2)
    weights_b = np.outer(w, wz).reshape(-1)
    return nodes_a, w, nodes_b, weights_b


def inclined_mutual(sa: np.ndarray, ea: np.ndarray, wa_dir: np.ndarray, ta_dir: np.ndarray,
                    wa: np.ndarray, ta: np.ndarray, sb: np.ndarray, eb: np.ndarray,
                    wb_dir: np.ndarray, tb_dir: np.ndarray, wb: np.ndarray, tb: np.ndarray,
                    order: np.ndarray, same_layer: np.ndarray | None = None) -> np.ndarray:
    """Mutual inductance (H) of pairs of bars at any angle, by ``order`` x ``order``
    Gauss-Legendre filaments per section (per pair). Points (n, 3) m, unit vectors
    along width and thickness (n, 3), dimensions (n,) m. Pairs flagged ``same_layer``
    (horizontal bars at one height with one thickness, thickness along +z for both)
    use the cheaper equivalent rule of :func:`_same_layer_grids` when order >= 2."""
    out = np.zeros(sa.shape[0])
    if same_layer is None:
        same_layer = np.zeros(sa.shape[0], dtype=bool)
    key = order * 2 + (same_layer & (order >= 2))
    for kv in np.unique(key):
        n, flat = int(kv) // 2, bool(kv % 2)
        idx = np.nonzero(key == kv)[0]
        if flat:
            nodes_a, w_a, nodes_b, w_b = _same_layer_grids(*SAME_LAYER_RULES.get(n, (n, 2)))
        else:
            nodes_a, w_a = _grid(n)
            nodes_b, w_b = nodes_a, w_a
        ww = np.outer(w_a, w_b).reshape(-1)
        step = max(1, _CHUNK // ww.size)
        for c0 in range(0, idx.size, step):
            sel = idx[c0:c0 + step]
            oa = (nodes_a[None, :, 0, None] * (wa[sel, None, None] * wa_dir[sel, None, :])
                  + nodes_a[None, :, 1, None] * (ta[sel, None, None] * ta_dir[sel, None, :]))
            ob = (nodes_b[None, :, 0, None] * (wb[sel, None, None] * wb_dir[sel, None, :])
                  + nodes_b[None, :, 1, None] * (tb[sel, None, None] * tb_dir[sel, None, :]))
            pa = (sa[sel, None, None, :] + oa[:, :, None, :])
            qa = (ea[sel, None, None, :] + oa[:, :, None, :])
            pb = (sb[sel, None, None, :] + ob[:, None, :, :])
            qb = (eb[sel, None, None, :] + ob[:, None, :, :])
            m = filament_mutual(pa, qa, pb, qb).reshape(sel.size, -1)
            out[sel] = m @ ww
    return out
