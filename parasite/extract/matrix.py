"""Assembly of the partial inductance matrix of all segments (H), images included.

The pairs are evaluated in numpy blocks, each pair by the formula for its kind
(:mod:`parasite.extract.pairs`: exact or filament forms near, Neumann's formula
by line quadrature far), over threads.

Return planes: ``L_ij = M(i, j) + M(i, image_j(j))`` with image factor -1
(:mod:`parasite.extract.images`). When i and j mirror in different planes this
is not symmetric; the matrix is made exactly symmetric by using the mean
``M(i, j) - (M(i, image_j(j)) + M(j, image_i(i)))/2`` for every pair, which is
the same number when both mirror in the same plane. A segment without a plane
(NaN) contributes no image term of its own.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor

import numpy as np

from geometry.model import SegmentArrays
from parasite.errors import ExtractionError
from parasite.extract.bars import (
    bar_self_inductance,
)
from parasite.extract.filaments import MU0_4PI
from parasite.extract.images import IMAGE_SIGN, mirror_points
from parasite.extract.pairs import (
    BLOCK_PAIRS,
    FAR_RULES,
    PERPENDICULAR_COS,
    PLAIN_SECTION_RATIO,
    _Conductors,
    _conductors,
    _mutual,
)
from parasite.extract.round import (
    round_self_inductance,
)


def _validate(arrays: SegmentArrays) -> None:
    length = arrays.length
    checks = [
        (~np.isfinite(arrays.start).all(axis=1) | ~np.isfinite(arrays.end).all(axis=1),
         "has a coordinate that is not a finite number"),
        (~(length > 0), "has zero length"),
        (~arrays.round & ~((arrays.width > 0) & (arrays.thickness > 0)),
         "is a bar without a positive width and thickness"),
        (arrays.round & ~((arrays.radius > 0) & (arrays.inner_radius >= 0)
                          & (arrays.inner_radius < arrays.radius)),
         "is a round conductor without 0 <= inner radius < radius"),
        (~arrays.round & (np.abs(arrays.end[:, 2] - arrays.start[:, 2]) > 1e-9 * length),
         "is a bar that does not lie in the board plane"),
    ]
    for bad, what in checks:
        if np.any(bad):
            i = int(np.argmax(bad))
            raise ExtractionError(
                f"segment {i} {what} (start {arrays.start[i].tolist()}, end {arrays.end[i].tolist()}"
                f", width {arrays.width[i]:g}, thickness {arrays.thickness[i]:g}, radius "
                f"{arrays.radius[i]:g}, inner radius {arrays.inner_radius[i]:g}); expected a "
                "straight segment of positive length with a positive section", key="segments")


def self_inductances(arrays: SegmentArrays) -> np.ndarray:
    """Partial self inductance (H) of every segment, without images."""
    out = np.empty(len(arrays))
    rnd = np.asarray(arrays.round, dtype=bool)
    length = arrays.length
    if np.any(~rnd):
        out[~rnd] = bar_self_inductance(length[~rnd], arrays.width[~rnd], arrays.thickness[~rnd])
    if np.any(rnd):
        out[rnd] = round_self_inductance(length[rnd], arrays.radius[rnd], arrays.inner_radius[rnd])
    return out


def inductance_matrix(arrays: SegmentArrays, *,
                      progress: Callable[[int, int], None] | None = None) -> np.ndarray:
    """Dense partial inductance matrix (N, N) in H, float64, exactly symmetric, images
    included (module docstring). ``progress(pairs_done, pairs_total)`` is called after
    each block (pairs counted with i <= j)."""
    _validate(arrays)
    n = len(arrays)
    rnd = np.asarray(arrays.round, dtype=bool)
    mz = np.asarray(arrays.mirror_z, dtype=float)
    has = np.isfinite(mz)
    img_index = np.full(n, -1)
    img_index[has] = n + np.arange(int(has.sum()))
    start = np.concatenate([arrays.start, mirror_points(arrays.start[has], mz[has])])
    end = np.concatenate([arrays.end, mirror_points(arrays.end[has], mz[has])])
    cond = _conductors(start, end, *(np.concatenate([v, v[has]]) for v in (
        np.asarray(arrays.width, float), np.asarray(arrays.thickness, float), rnd,
        np.asarray(arrays.radius, float), np.asarray(arrays.inner_radius, float))))

    total = n * (n + 1) // 2
    L = np.empty((n, n))
    diag = self_inductances(arrays)
    idx = np.nonzero(has)[0]
    if idx.size:
        diag[idx] += IMAGE_SIGN * _mutual(cond, idx, img_index[idx])
    L[np.arange(n), np.arange(n)] = diag
    done = n
    if progress is not None:
        progress(done, total)

    step = max(1, BLOCK_PAIRS // max(n, 1))

    def work(r0: int) -> int:
        rows = np.arange(r0, min(n - 1, r0 + step))
        vals = _block_values(cond, rows, np.arange(r0 + 1, n), img_index, mz)
        for k, i in enumerate(rows.tolist()):  # one Python step per row, not per pair
            L[i, i + 1:] = vals[k, i - r0:]
        return int(np.sum(n - 1 - rows))

    # numpy releases the GIL in its loops: blocks run on all cores; each block writes
    # its own rows right of the diagonal, so they never overlap; the lower triangle is
    # copied from the upper one afterwards, tile by tile
    starts = list(range(0, n - 1, step))
    workers = min(len(starts), _workers())
    if workers <= 1:
        for r0 in starts:
            done += work(r0)
            if progress is not None:
                progress(done, total)
    else:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            for count in pool.map(work, starts):
                done += count
                if progress is not None:
                    progress(done, total)
    _mirror_upper(L)
    return L


def _mirror_upper(L: np.ndarray, tile: int = 256) -> None:
    """Copy the strict upper triangle of L onto the lower one, in place, by tiles (the
    copy of one tile row is the only temporary)."""
    n = L.shape[0]
    for r0 in range(0, n, tile):
        r1 = min(n, r0 + tile)
        diag = L[r0:r1, r0:r1]
        low = np.tril_indices(r1 - r0, -1)
        diag[low] = diag.T[low]
        if r1 < n:
            L[r1:, r0:r1] = L[r0:r1, r1:].T


def _workers() -> int:
    """Threads for the assembly: the cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def _block_values(cond: _Conductors, rows: np.ndarray, cols: np.ndarray,
                  img_index: np.ndarray, mz: np.ndarray) -> np.ndarray:
    """L_ij for rows x cols (dense block): direct term plus the symmetrised image terms."""
    direct = _block_mutual(cond, rows, cols)
    ci, ri = img_index[cols], img_index[rows]
    hc, hr = ci >= 0, ri >= 0
    if not (np.any(hc) or np.any(hr)):
        return direct
    img_j = np.zeros_like(direct)
    if np.any(hc):
        img_j[:, hc] = _block_mutual(cond, rows, ci[hc])
    same = hr[:, None] & hc[None, :] & (mz[rows][:, None] == mz[cols][None, :])
    img_i = np.where(same, img_j, 0.0)
    need = hr[:, None] & ~same
    if np.any(need):
        rsel = np.nonzero(need.any(axis=1))[0]
        # M(j, image i) = M(image i, j): rows are the images
        part = _block_mutual(cond, ri[rsel], cols)
        img_i[rsel] = np.where(need[rsel], part, img_i[rsel])
    return direct + IMAGE_SIGN * 0.5 * (img_j + img_i)


def _block_mutual(c: _Conductors, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
    """Mutual inductance (H) of conductors rows x cols (dense block).

    The bulk (pairs far apart compared with their lengths and 20 section sizes) is
    evaluated densely with 2-point line quadrature, all bilinear quantities coming
    from small matrix products; the remaining pairs go through :func:`_mutual`."""
    ua, ub = c.u[rows], c.u[cols]
    ma_, mb_ = c.mid[rows], c.mid[cols]
    la, lb = c.length[rows][:, None], c.length[cols][None, :]
    cos = ua @ ub.T
    sa = np.einsum("ij,ij->i", ma_, ma_)[:, None]
    sb = np.einsum("ij,ij->i", mb_, mb_)[None, :]
    mm = np.maximum(sa + sb - 2.0 * (ma_ @ mb_.T), 0.0)  # |mid_a - mid_b|^2
    m_ua = (
        np.einsum("ij,ij->i", ma_, ua)[:, None] - (ua @ mb_.T))
    m_ub = (ma_ @ ub.T) - np.einsum("ij,ij->i", mb_, ub)[None, :]
    dm = np.sqrt(mm)
    lmax = np.maximum(la, lb)
    hmax = np.maximum(c.size[rows][:, None], c.size[cols][None, :])
    live = np.abs(cos) >= PERPENDICULAR_COS
    far = live & (dm >= FAR_RULES[0][0] * lmax) & (
        dm - 0.5 * (la + lb) >= PLAIN_SECTION_RATIO * hmax)
    x = 0.5 / np.sqrt(3.0)
    ab = la * lb * cos
    base = mm + (x * x) * (la * la + lb * lb)
    pa = (2.0 * x) * la * m_ua
    pb = (2.0 * x) * lb * m_ub
    cross = (2.0 * x * x) * ab
    with np.errstate(divide="ignore", invalid="ignore"):  # pairs not far: overwritten below
        acc = 1.0 / np.sqrt(base + pa - pb - cross)
        acc += 1.0 / np.sqrt(base + pa + pb + cross)
        acc += 1.0 / np.sqrt(base - pa - pb + cross)
        acc += 1.0 / np.sqrt(base - pa + pb - cross)
    out = np.where(far, (0.25 * MU0_4PI) * ab * acc, 0.0)
    rest = live & ~far
    if np.any(rest):
        ri, cj = np.nonzero(rest)
        out[ri, cj] = _mutual(c, rows[ri], cols[cj])
    return out
