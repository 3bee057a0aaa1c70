"""Compiled (numba) loops over segment pairs for the inductance matrix.

The pairs of a board fall in two groups (:mod:`parasite.extract.pairs`):

* far pairs (midpoint distance at least ``FAR_RULES`` times the longer length and
  clear of each other by ``FAR_SECTION_RATIO`` section sizes): Neumann's formula by
  Gauss-Legendre quadrature along both centre lines, with the second-order section
  correction when closer than ``PLAIN_SECTION_RATIO`` section sizes
  (:func:`parasite.extract.pairs.far_mutual`, same arithmetic);
* near pairs: everything else (exact bar formulas, filaments over sections), listed
  here and evaluated by :func:`parasite.extract.matrix.near_values` (compiled in
  :mod:`parasite.extract.near_kernels`, the same formulas as
  :func:`parasite.extract.pairs._mutual`).

Here the far pairs are evaluated in compiled loops, rows in parallel over the cores
(``numba.prange``), and the near pairs are only listed (kind 1 of
:func:`classify`). The perpendicular pairs are exactly 0 (factor u_a . u_b of
Neumann's formula). Lengths in m, inductances in H.
"""

from __future__ import annotations

from typing import Any

import numba as nb
import numpy as np

from parasite.extract.filaments import MU0_4PI
from parasite.extract.pairs import (
    FAR_RULES,
    FAR_SECTION_RATIO,
    PERPENDICULAR_COS,
    PLAIN_SECTION_RATIO,
)

_ORDERS = np.array([n for _, n in FAR_RULES], dtype=np.int64)
_RATIOS = np.array([r for r, _ in FAR_RULES], dtype=np.float64)
_MAXO = int(_ORDERS.max())
_GX = np.zeros((len(FAR_RULES), _MAXO))
_GW = np.zeros((len(FAR_RULES), _MAXO))
for _k, _n in enumerate(_ORDERS):
    _x, _w = np.polynomial.legendre.leggauss(int(_n))
    _GX[_k, :_n] = 0.5 * _x
    _GW[_k, :_n] = 0.5 * _w

NEAR = -1
"""Rule index returned by :func:`classify` for a pair left to the exact formulas."""
ZERO = -2
"""Rule index of a perpendicular pair (exactly 0)."""


@nb.njit(cache=True, inline="always")
def _dot(a: np.ndarray, i: int, b: np.ndarray, j: int) -> float:
    return a[i, 0] * b[j, 0] + a[i, 1] * b[j, 1] + a[i, 2] * b[j, 2]


@nb.njit(cache=True)
def classify(a: int, b: int, u: np.ndarray, mid: np.ndarray, length: np.ndarray,
             size: np.ndarray) -> int:
    """Index of the far rule for pair (a, b), :data:`NEAR` or :data:`ZERO`; plus 10 when the
    section correction is not needed (``PLAIN_SECTION_RATIO``)."""
    cos = _dot(u, a, u, b)
    if abs(cos) < PERPENDICULAR_COS:
        return ZERO
    dx = mid[a, 0] - mid[b, 0]
    dy = mid[a, 1] - mid[b, 1]
    dz = mid[a, 2] - mid[b, 2]
    dm = np.sqrt(dx * dx + dy * dy + dz * dz)
    lmax = max(length[a], length[b])
    gap = dm - 0.5 * (length[a] + length[b])
    hmax = max(size[a], size[b])
    if gap < FAR_SECTION_RATIO * hmax:
        return NEAR
    plain = 10 if gap >= PLAIN_SECTION_RATIO * hmax else 0
    for k in range(_RATIOS.size):
        if dm >= _RATIOS[k] * lmax:
            return k + plain
    return NEAR


@nb.njit(cache=True)
def far_value(rule: int, a: int, b: int, mid: np.ndarray, d: np.ndarray, w_dir: np.ndarray,
              t_dir: np.ndarray, width: np.ndarray, thickness: np.ndarray) -> float:
    """Mutual inductance (H) of a far pair by rule ``rule`` of :func:`classify`: the same
    sums as :func:`parasite.extract.pairs.far_mutual`."""
    plain = rule >= 10
    k = rule - 10 if plain else rule
    n = _ORDERS[k]
    mx = mid[a, 0] - mid[b, 0]
    my = mid[a, 1] - mid[b, 1]
    mzz = mid[a, 2] - mid[b, 2]
    mm = mx * mx + my * my + mzz * mzz
    ma = 2.0 * (mx * d[a, 0] + my * d[a, 1] + mzz * d[a, 2])
    mb = -2.0 * (mx * d[b, 0] + my * d[b, 1] + mzz * d[b, 2])
    aa = _dot(d, a, d, a)
    bb = _dot(d, b, d, b)
    ab = _dot(d, a, d, b)
    acc = 0.0
    if plain:
        for p in range(n):
            xk = _GX[k, p]
            base = mm + xk * ma + xk * xk * aa
            for q in range(n):
                xl = _GX[k, q]
                acc += (_GW[k, p] * _GW[k, q]) / np.sqrt(
                    base + xl * mb + xl * xl * bb - 2.0 * xk * xl * ab)
        return MU0_4PI * ab * acc
    # projections on the four section axes (w_a, t_a, w_b, t_b), scalars (no allocation)
    pm0 = w_dir[a, 0] * mx + w_dir[a, 1] * my + w_dir[a, 2] * mzz
    pm1 = t_dir[a, 0] * mx + t_dir[a, 1] * my + t_dir[a, 2] * mzz
    pm2 = w_dir[b, 0] * mx + w_dir[b, 1] * my + w_dir[b, 2] * mzz
    pm3 = t_dir[b, 0] * mx + t_dir[b, 1] * my + t_dir[b, 2] * mzz
    pa0, pa1 = _dot(w_dir, a, d, a), _dot(t_dir, a, d, a)
    pa2, pa3 = _dot(w_dir, b, d, a), _dot(t_dir, b, d, a)
    pb0, pb1 = _dot(w_dir, a, d, b), _dot(t_dir, a, d, b)
    pb2, pb3 = _dot(w_dir, b, d, b), _dot(t_dir, b, d, b)
    v0 = width[a] * width[a] / 12.0
    v1 = thickness[a] * thickness[a] / 12.0
    v2 = width[b] * width[b] / 12.0
    v3 = thickness[b] * thickness[b] / 12.0
    trc = v0 + v1 + v2 + v3
    for p in range(n):
        xk = _GX[k, p]
        base = mm + xk * ma + xk * xk * aa
        k0, k1, k2, k3 = pm0 + xk * pa0, pm1 + xk * pa1, pm2 + xk * pa2, pm3 + xk * pa3
        for q in range(n):
            xl = _GX[k, q]
            r2 = base + xl * mb + xl * xl * bb - 2.0 * xk * xl * ab
            q0, q1, q2, q3 = k0 - xl * pb0, k1 - xl * pb1, k2 - xl * pb2, k3 - xl * pb3
            rcr = v0 * (q0 * q0) + v1 * (q1 * q1) + v2 * (q2 * q2) + v3 * (q3 * q3)
            inv = 1.0 / np.sqrt(r2)
            inv2 = inv * inv
            acc += (_GW[k, p] * _GW[k, q]) * inv * (1.0 + 0.5 * inv2 * (3.0 * rcr * inv2 - trc))
    return MU0_4PI * ab * acc


@nb.njit(cache=True, inline="always")
def _terms(i: int, j: int, img: np.ndarray, mz: np.ndarray) -> tuple[int, int, int, int]:
    """The conductor pairs of entry (i, j): (i, j), (i, image j), (image i, j) (-1: absent);
    the last is absent when both mirror in the same plane (then it equals the second)."""
    ci = img[j]
    ri = img[i]
    same = ri >= 0 and ci >= 0 and mz[i] == mz[j]
    third = ri if (ri >= 0 and not same) else -1
    return ci, third, 1 if same else 0, 0


@nb.njit(cache=True, inline="always")
def _row(r0: int, m: int, r: int) -> int:
    """Row of iteration r of m: both ends of the range alternately, so that the static
    split of ``prange`` gives every core about the same number of pairs."""
    return r0 + (r // 2 if r % 2 == 0 else m - 1 - r // 2)


@nb.njit(cache=True)
def _entry_count(i: int, j: int, img: np.ndarray, mz: np.ndarray, u: np.ndarray,
                 mid: np.ndarray, length: np.ndarray, size: np.ndarray) -> int:
    """Near conductor pairs among the terms of entry (i, j)."""
    ci, third, _s, _z = _terms(i, j, img, mz)
    c = 0
    if classify(i, j, u, mid, length, size) == NEAR:
        c += 1
    if ci >= 0 and classify(i, ci, u, mid, length, size) == NEAR:
        c += 1
    if third >= 0 and classify(third, j, u, mid, length, size) == NEAR:
        c += 1
    return c


@nb.njit(cache=True)
def _entry_list(i: int, j: int, img: np.ndarray, mz: np.ndarray, u: np.ndarray,
                mid: np.ndarray, length: np.ndarray, size: np.ndarray, c: int,
                pa: np.ndarray, pb: np.ndarray) -> int:
    """Write the near conductor pairs of entry (i, j) from slot c; returns the next slot."""
    ci, third, _s, _z = _terms(i, j, img, mz)
    if classify(i, j, u, mid, length, size) == NEAR:
        pa[c] = i
        pb[c] = j
        c += 1
    if ci >= 0 and classify(i, ci, u, mid, length, size) == NEAR:
        pa[c] = i
        pb[c] = ci
        c += 1
    if third >= 0 and classify(third, j, u, mid, length, size) == NEAR:
        pa[c] = third
        pb[c] = j
        c += 1
    return c


@nb.njit(cache=True)
def _entry_value(i: int, j: int, img: np.ndarray, mz: np.ndarray, image_sign: float,
                 u: np.ndarray, mid: np.ndarray, d: np.ndarray, length: np.ndarray,
                 size: np.ndarray, w_dir: np.ndarray, t_dir: np.ndarray, width: np.ndarray,
                 thickness: np.ndarray, near: np.ndarray, c: int) -> tuple[float, int]:
    """L[i, j] (i != j): ``direct + image_sign/2 (M(i, j') + M(i', j))`` (images primed;
    :mod:`parasite.extract.matrix`), near terms read from ``near`` from slot c."""
    ci, third, same, _z = _terms(i, j, img, mz)
    direct, c = _value(i, j, u, mid, d, length, size, w_dir, t_dir, width, thickness, near, c)
    img_j = 0.0
    img_i = 0.0
    if ci >= 0:
        img_j, c = _value(i, ci, u, mid, d, length, size, w_dir, t_dir, width, thickness,
                          near, c)
    if same:
        img_i = img_j
    elif third >= 0:
        img_i, c = _value(third, j, u, mid, d, length, size, w_dir, t_dir, width, thickness,
                          near, c)
    if ci >= 0 or third >= 0:
        return direct + image_sign * 0.5 * (img_j + img_i), c
    return direct, c


@nb.njit(cache=True, parallel=True)
def count_near(r0: int, r1: int, n: int, img: np.ndarray, mz: np.ndarray, u: np.ndarray,
               mid: np.ndarray, length: np.ndarray, size: np.ndarray) -> np.ndarray:
    """Near conductor pairs in rows r0..r1-1 of the upper triangle (j > i), per row."""
    out = np.zeros(r1 - r0, dtype=np.int64)
    for r in nb.prange(r1 - r0):
        i = _row(r0, r1 - r0, r)
        c = 0
        for j in range(i + 1, n):
            c += _entry_count(i, j, img, mz, u, mid, length, size)
        out[i - r0] = c
    return out


@nb.njit(cache=True, parallel=True)
def list_near(r0: int, r1: int, n: int, img: np.ndarray, mz: np.ndarray, u: np.ndarray,
              mid: np.ndarray, length: np.ndarray, size: np.ndarray, offsets: np.ndarray,
              pa: np.ndarray, pb: np.ndarray) -> None:
    """Write the near conductor pairs of rows r0..r1-1 at ``offsets`` (row order, then j,
    then the term order of :func:`_terms`)."""
    for r in nb.prange(r1 - r0):
        i = _row(r0, r1 - r0, r)
        c = offsets[i - r0]
        for j in range(i + 1, n):
            c = _entry_list(i, j, img, mz, u, mid, length, size, c, pa, pb)


@nb.njit(cache=True)
def _value(a: int, b: int, u: np.ndarray, mid: np.ndarray, d: np.ndarray, length: np.ndarray,
           size: np.ndarray, w_dir: np.ndarray, t_dir: np.ndarray, width: np.ndarray,
           thickness: np.ndarray, near: np.ndarray, c: int) -> tuple[float, int]:
    rule = classify(a, b, u, mid, length, size)
    if rule == ZERO:
        return 0.0, c
    if rule == NEAR:
        return near[c], c + 1
    return far_value(rule, a, b, mid, d, w_dir, t_dir, width, thickness), c


@nb.njit(cache=True, parallel=True)
def fill_rows(L: np.ndarray, r0: int, r1: int, img: np.ndarray, mz: np.ndarray,
              image_sign: float, u: np.ndarray, mid: np.ndarray, d: np.ndarray,
              length: np.ndarray, size: np.ndarray, w_dir: np.ndarray, t_dir: np.ndarray,
              width: np.ndarray, thickness: np.ndarray, offsets: np.ndarray,
              near: np.ndarray) -> None:
    """L[i, j] (j > i) for rows r0..r1-1 (:func:`_entry_value`), near terms read from
    ``near`` in the order written by :func:`list_near`."""
    n = L.shape[0]
    for r in nb.prange(r1 - r0):
        i = _row(r0, r1 - r0, r)
        c = offsets[i - r0]
        for j in range(i + 1, n):
            L[i, j], c = _entry_value(i, j, img, mz, image_sign, u, mid, d, length, size,
                                      w_dir, t_dir, width, thickness, near, c)


@nb.njit(cache=True, parallel=True)
def count_near_pairs(ii: np.ndarray, jj: np.ndarray, img: np.ndarray, mz: np.ndarray,
                     u: np.ndarray, mid: np.ndarray, length: np.ndarray,
                     size: np.ndarray) -> np.ndarray:
    """Near conductor pairs of each entry (ii[k], jj[k]), ii != jj."""
    out = np.zeros(ii.size, dtype=np.int64)
    for k in nb.prange(ii.size):
        out[k] = _entry_count(ii[k], jj[k], img, mz, u, mid, length, size)
    return out


@nb.njit(cache=True, parallel=True)
def list_near_pairs(ii: np.ndarray, jj: np.ndarray, img: np.ndarray, mz: np.ndarray,
                    u: np.ndarray, mid: np.ndarray, length: np.ndarray, size: np.ndarray,
                    offsets: np.ndarray, pa: np.ndarray, pb: np.ndarray) -> None:
    """The near conductor pairs of the entries, at ``offsets``."""
    for k in nb.prange(ii.size):
        _entry_list(ii[k], jj[k], img, mz, u, mid, length, size, offsets[k], pa, pb)


@nb.njit(cache=True, parallel=True)
def fill_pairs(ii: np.ndarray, jj: np.ndarray, out: np.ndarray, img: np.ndarray,
               mz: np.ndarray, image_sign: float, u: np.ndarray, mid: np.ndarray,
               d: np.ndarray, length: np.ndarray, size: np.ndarray, w_dir: np.ndarray,
               t_dir: np.ndarray, width: np.ndarray, thickness: np.ndarray,
               offsets: np.ndarray, near: np.ndarray) -> None:
    """out[k] = L[ii[k], jj[k]] (ii != jj), as :func:`fill_rows`."""
    for k in nb.prange(ii.size):
        out[k], _c = _entry_value(ii[k], jj[k], img, mz, image_sign, u, mid, d, length,
                                  size, w_dir, t_dir, width, thickness, near, offsets[k])


@nb.njit(cache=True)
def _line_points(a: int, b: int, mid: np.ndarray, d: np.ndarray, off: np.ndarray,
                 ts: np.ndarray) -> float:
    """Neumann's formula (H) by the far field's points: 2-point Gauss-Legendre along
    both centre lines, each point at ``mid +- x d + t off`` for every ``t`` of ``ts``
    (``(-1, 1)``: split in two across the width, the section's second moment there;
    ``(0,)``: on the centre line), equal weights, every pair of points; for ``a == b`` a
    point's own term is left out (as the far-field sum leaves it out)."""
    x = 0.5 / np.sqrt(3.0)
    nt = ts.size
    wgt = 1.0 / (4.0 * nt * nt)
    acc = 0.0
    for sk in (-1.0, 1.0):
        for tk in ts:
            for sl in (-1.0, 1.0):
                for tl in ts:
                    if a == b and sk == sl and tk == tl:
                        continue
                    rx = (mid[a, 0] + sk * x * d[a, 0] + tk * off[a, 0]
                          - mid[b, 0] - sl * x * d[b, 0] - tl * off[b, 0])
                    ry = (mid[a, 1] + sk * x * d[a, 1] + tk * off[a, 1]
                          - mid[b, 1] - sl * x * d[b, 1] - tl * off[b, 1])
                    rz = (mid[a, 2] + sk * x * d[a, 2] + tk * off[a, 2]
                          - mid[b, 2] - sl * x * d[b, 2] - tl * off[b, 2])
                    acc += wgt / np.sqrt(rx * rx + ry * ry + rz * rz)
    return MU0_4PI * _dot(d, a, d, b) * acc


@nb.njit(cache=True, parallel=True)
def point_entries(ii: np.ndarray, jj: np.ndarray, img: np.ndarray, image_sign: float,
                  mid: np.ndarray, d: np.ndarray, off: np.ndarray,
                  ts: np.ndarray) -> np.ndarray:
    """What the point-source far field gives for entry (ii[k], jj[k]): every term by the
    far field's points (:func:`_line_points`), images symmetrised as in
    :func:`_entry_value`; on the diagonal (ii == jj) the direct term without a point's
    own term (the far-field sum leaves it out)."""
    out = np.empty(ii.size)
    for k in nb.prange(ii.size):
        i, j = ii[k], jj[k]
        direct = _line_points(i, j, mid, d, off, ts)
        ci, ri = img[j], img[i]
        a = _line_points(i, ci, mid, d, off, ts) if ci >= 0 else 0.0
        b = _line_points(ri, j, mid, d, off, ts) if ri >= 0 else 0.0
        out[k] = direct + image_sign * 0.5 * (a + b)
    return out


def width_offsets(c: Any) -> np.ndarray:
    """(K, 3) m: each conductor's offset across its width, ``w / sqrt(12)`` along its
    width axis: two points at +-offset have the second moment of a uniform width w
    (for a round conductor its equal-moment square's side)."""
    return np.ascontiguousarray((c.width / np.sqrt(12.0))[:, None] * c.w_dir)
