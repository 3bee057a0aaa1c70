"""The mutual partial inductance of a block of segment pairs (H), by kind of pair.

Every pair is sorted by kind and evaluated in numpy blocks (no per-pair Python
loops):

* perpendicular segments (|cos| < 1e-12): exactly 0 (Neumann's formula has the
  factor u_a . u_b);
* parallel bars: :func:`parasite.extract.bars.parallel_bars` (exact near,
  moment-corrected filaments far);
* coaxial round conductors (pieces of a via stack, a via and its image):
  :func:`parasite.extract.round.coaxial_round_mutual`;
* a bar and a parallel round conductor (a probe lead along a trace) closer than
  ``FAR_RATIO`` section sizes: :func:`parasite.extract.round.parallel_bar_round`
  (filaments over both sections);
* other parallel pairs with a round conductor: centre filaments with the
  second-moment correction of both sections (fourth order for two round ones);
* any other angle: Gauss-Legendre filaments over both sections with Neumann's
  closed form, order from distance / section size
  (:mod:`parasite.extract.inclined`);
* any pair far apart compared with its lengths and sections (most pairs of a
  board), whatever the angle: Neumann's formula by Gauss-Legendre quadrature
  along the two centre lines (:func:`far_mutual`; order 2 or 3, bounds in
  :data:`FAR_RULES`).

The assembly of the matrix (images, blocks, threads) is :mod:`parasite.extract.matrix`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from parasite.extract.bars import (
    FAR_RATIO,
    parallel_bars,
    parallel_filaments_corrected,
)
from parasite.extract.filaments import MU0_4PI, gauss_legendre
from parasite.extract.inclined import choose_order, inclined_mutual, segment_distance
from parasite.extract.round import (
    coaxial_round_mutual,
    parallel_bar_round,
    round_difference_m4,
    round_section_variance,
)

PERPENDICULAR_COS = 1e-12
PARALLEL_SIN = 1e-9
BLOCK_PAIRS = 200_000  # pairs per vectorised block (bounds the temporaries to a few tens of MB)


FAR_RULES: tuple[tuple[float, int], ...] = ((3.5, 2), (2.0, 3), (1.5, 4), (1.2, 5))
"""(minimum of midpoint distance / longer length, Gauss-Legendre order along each
centre line) for :func:`far_mutual`. Worst relative error of the line quadrature
over random pairs at each bound: 8e-5, 2e-5, 1e-5, 4e-5 (tests/extract/test_extract_matrix.py)."""

PLAIN_SECTION_RATIO = 30.0
"""Pairs whose least possible distance is at least this many section sizes skip the
section correction (relative size about (h/D)^2/12, below 1e-4 here; with the line
quadrature the worst case in tests/extract/test_extract_matrix.py is 6e-5)."""

FAR_SECTION_RATIO = 4.0
"""A pair uses :func:`far_mutual` only if its least possible distance (midpoint distance
minus the half lengths) is at least this many times the larger section size; the
second-order section correction then leaves a fourth-order remainder below 1e-4."""


def far_mutual(mid_a: np.ndarray, da: np.ndarray, mid_b: np.ndarray, db: np.ndarray,
               order: int, dirs: np.ndarray | None = None,
               var: np.ndarray | None = None) -> np.ndarray:
    """Neumann's formula (H) by ``order``-point Gauss-Legendre quadrature along both centre
    lines, averaged over both sections to second order.

    ``M = mu0/(4 pi) (da . db) sum_kl w_k w_l E[1/|R_kl + delta|]`` with R_kl the vector
    between nodes and delta the offset between a point of section b and one of
    section a; ``E[1/|R + delta|] = 1/R + (3 R.C.R / R^2 - tr C) / (2 R^3) + O(delta^4)``
    (Taylor expansion of 1/R; C the covariance of delta, sum of sigma_k^2 e_k e_k^T
    over the section axes ``dirs`` (n, 4, 3) with variances ``var`` (n, 4) m^2).
    Segments by midpoints and end-to-end vectors (n, 3) in m; x_k in [-1/2, 1/2]. The
    squared distances are expanded in dot products, so each node pair costs a few flops.
    Without ``dirs`` the section correction is left out (pairs clear of each other by
    :data:`PLAIN_SECTION_RATIO` section sizes).
    """
    x, w = gauss_legendre(order)
    x, w = 0.5 * x, 0.5 * w
    m = mid_a - mid_b
    mm = np.einsum("ij,ij->i", m, m)
    ma = 2.0 * np.einsum("ij,ij->i", m, da)
    mb = -2.0 * np.einsum("ij,ij->i", m, db)
    aa = np.einsum("ij,ij->i", da, da)
    bb = np.einsum("ij,ij->i", db, db)
    ab = np.einsum("ij,ij->i", da, db)
    acc = np.zeros(mm.shape)
    if dirs is None or var is None:
        for xk, wk in zip(x, w, strict=True):
            base = mm + xk * ma + xk * xk * aa
            for xl, wl in zip(x, w, strict=True):
                acc += (wk * wl) / np.sqrt(base + xl * mb + xl * xl * bb - 2.0 * xk * xl * ab)
        return MU0_4PI * ab * acc
    pm = np.einsum("ikj,ij->ik", dirs, m)  # (n, 4) projections on the section axes
    pa = np.einsum("ikj,ij->ik", dirs, da)
    pb = np.einsum("ikj,ij->ik", dirs, db)
    trc = var.sum(axis=1)
    for xk, wk in zip(x, w, strict=True):
        base = mm + xk * ma + xk * xk * aa
        pk = pm + xk * pa
        for xl, wl in zip(x, w, strict=True):
            r2 = base + xl * mb + xl * xl * bb - 2.0 * xk * xl * ab
            proj = pk - xl * pb
            rcr = np.einsum("ik,ik->i", var, proj * proj)
            inv = 1.0 / np.sqrt(r2)
            inv2 = inv * inv
            acc += (wk * wl) * inv * (1.0 + 0.5 * inv2 * (3.0 * rcr * inv2 - trc))
    return MU0_4PI * ab * acc


@dataclass(frozen=True)
class _Conductors:
    """Segments and their images as one table of 'virtual' conductors."""

    start: np.ndarray
    end: np.ndarray
    u: np.ndarray
    length: np.ndarray
    round: np.ndarray
    width: np.ndarray  # bars: width; round: side of the square of equal second moment
    thickness: np.ndarray
    radius: np.ndarray
    inner: np.ndarray
    w_dir: np.ndarray
    t_dir: np.ndarray
    size: np.ndarray  # largest section dimension (m)
    mid: np.ndarray
    d: np.ndarray  # end - start


def _conductors(start: np.ndarray, end: np.ndarray, width: np.ndarray, thickness: np.ndarray,
                rnd: np.ndarray, radius: np.ndarray, inner: np.ndarray) -> _Conductors:
    d = end - start
    length = np.linalg.norm(d, axis=1)
    u = d / length[:, None]
    ez = np.array([0.0, 0.0, 1.0])
    # section frame: bars lie in the board plane (width horizontal, thickness along z)
    helper = np.where((np.abs(u[:, 2]) > 0.9)[:, None], np.array([1.0, 0.0, 0.0]), ez)
    w_dir = np.cross(helper, u)
    w_dir /= np.linalg.norm(w_dir, axis=1)[:, None]
    t_dir = np.cross(u, w_dir)
    side = np.sqrt(3.0 * (radius**2 + inner**2))
    wid = np.where(rnd, side, width)
    thk = np.where(rnd, side, thickness)
    size = np.where(rnd, 2 * radius, np.maximum(width, thickness))
    return _Conductors(start, end, u, length, rnd, wid, thk, radius, inner, w_dir, t_dir, size,
                       0.5 * (start + end), d)


def _mutual(c: _Conductors, ia: np.ndarray, ib: np.ndarray) -> np.ndarray:
    """Partial mutual inductance (H) of virtual conductors ia[k], ib[k] (k pairs)."""
    out = np.zeros(ia.shape[0])
    cos = np.einsum("ij,ij->i", c.u[ia], c.u[ib])
    live = np.abs(cos) >= PERPENDICULAR_COS
    dm = np.linalg.norm(c.mid[ia] - c.mid[ib], axis=1)
    lmax = np.maximum(c.length[ia], c.length[ib])
    gap = dm - 0.5 * (c.length[ia] + c.length[ib])
    hmax = np.maximum(c.size[ia], c.size[ib])
    clear = gap >= FAR_SECTION_RATIO * hmax
    plain = gap >= PLAIN_SECTION_RATIO * hmax
    todo = live.copy()
    for ratio, n_gl in FAR_RULES:
        sel = todo & clear & (dm >= ratio * lmax)
        if not np.any(sel):
            continue
        for corrected in (False, True):
            part = sel & (plain != corrected)
            if not np.any(part):
                continue
            a, b = ia[part], ib[part]
            if corrected:
                dirs = np.stack([c.w_dir[a], c.t_dir[a], c.w_dir[b], c.t_dir[b]], axis=1)
                var = np.stack([c.width[a], c.thickness[a], c.width[b], c.thickness[b]],
                               axis=1)
                out[part] = far_mutual(c.mid[a], c.d[a], c.mid[b], c.d[b], n_gl, dirs,
                                       var * var / 12.0)
            else:
                out[part] = far_mutual(c.mid[a], c.d[a], c.mid[b], c.d[b], n_gl)
        todo &= ~sel
    if not np.any(todo):
        return out
    sub = np.nonzero(todo)[0]
    ia, ib, cos = ia[sub], ib[sub], cos[sub]
    sin = np.linalg.norm(np.cross(c.u[ia], c.u[ib]), axis=1)
    par = sin < PARALLEL_SIN
    gen = ~par
    res = np.zeros(sub.size)
    if np.any(par):
        res[par] = _parallel(c, ia[par], ib[par], np.sign(cos[par]))
    if np.any(gen):
        a, b = ia[gen], ib[gen]
        dist = segment_distance(c.start[a], c.end[a], c.start[b], c.end[b])
        order = choose_order(dist, np.maximum(c.size[a], c.size[b]))
        flat = (~c.round[a] & ~c.round[b] & (c.thickness[a] == c.thickness[b])
                & (c.start[a][:, 2] == c.start[b][:, 2]) & (c.t_dir[a][:, 2] > 0.999999)
                & (c.t_dir[b][:, 2] > 0.999999))
        res[gen] = inclined_mutual(c.start[a], c.end[a], c.w_dir[a], c.t_dir[a], c.width[a],
                                   c.thickness[a], c.start[b], c.end[b], c.w_dir[b], c.t_dir[b],
                                   c.width[b], c.thickness[b], order, flat)
    out[sub] = res
    return out


def _parallel(c: _Conductors, a: np.ndarray, b: np.ndarray, sgn: np.ndarray) -> np.ndarray:
    ua = c.u[a]
    rel0 = c.start[b] - c.start[a]
    rel1 = c.end[b] - c.start[a]
    x0 = np.einsum("ij,ij->i", rel0, ua)
    x1 = np.einsum("ij,ij->i", rel1, ua)
    lo, hi = np.minimum(x0, x1), np.maximum(x0, x1)
    zero = np.zeros_like(lo)
    la = c.length[a]
    perp = rel0 - x0[:, None] * ua
    dy = np.einsum("ij,ij->i", perp, c.w_dir[a])
    dz = np.einsum("ij,ij->i", perp, c.t_dir[a])
    rho = np.hypot(dy, dz)
    ra, rb = c.round[a], c.round[b]
    out = np.empty(a.shape[0])
    bars = ~ra & ~rb
    if np.any(bars):
        m = bars
        out[m] = parallel_bars(zero[m], la[m], lo[m], hi[m], dy[m], dz[m], c.width[a][m],
                               c.thickness[a][m], c.width[b][m], c.thickness[b][m])
    both = ra & rb
    coax = both & (rho <= 1e-6 * np.minimum(c.radius[a], c.radius[b]))
    if np.any(coax):
        m = coax
        out[m] = coaxial_round_mutual(zero[m], la[m], lo[m], hi[m], c.radius[a][m],
                                      c.inner[a][m], c.radius[b][m], c.inner[b][m])
    mixed = ra != rb
    hmax = np.maximum(c.size[a], c.size[b])
    near_mixed = mixed & (rho < FAR_RATIO * hmax)
    if np.any(near_mixed):
        m = near_mixed & ~ra  # a is the bar
        if np.any(m):
            out[m] = parallel_bar_round(zero[m], la[m], lo[m], hi[m], dy[m], dz[m],
                                        c.width[a][m], c.thickness[a][m], c.radius[b][m],
                                        c.inner[b][m])
        m = near_mixed & ra  # a is the round conductor: swap the roles
        if np.any(m):
            out[m] = parallel_bar_round(lo[m], hi[m], zero[m], la[m], -dy[m], -dz[m],
                                        c.width[b][m], c.thickness[b][m], c.radius[a][m],
                                        c.inner[a][m])
    rest = ~bars & ~coax & ~near_mixed
    if np.any(rest):
        m = rest
        var_a = np.where(ra[m], round_section_variance(c.radius[a][m], c.inner[a][m]), 0.0)
        var_b = np.where(rb[m], round_section_variance(c.radius[b][m], c.inner[b][m]), 0.0)
        m2y = var_a + var_b + np.where(ra[m], 0.0, c.width[a][m] ** 2 / 12) \
            + np.where(rb[m], 0.0, c.width[b][m] ** 2 / 12)
        m2z = var_a + var_b + np.where(ra[m], 0.0, c.thickness[a][m] ** 2 / 12) \
            + np.where(rb[m], 0.0, c.thickness[b][m] ** 2 / 12)
        m4 = np.where(ra[m] & rb[m], round_difference_m4(
            c.radius[a][m], c.inner[a][m], c.radius[b][m], c.inner[b][m]), 0.0)
        out[m] = parallel_filaments_corrected(zero[m], la[m], lo[m], hi[m], dy[m], dz[m],
                                              m2y, m2z, m4)
    return sgn * out
