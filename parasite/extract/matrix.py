"""Assembly of the partial inductance matrix of all segments (H), images included.

Each pair is evaluated by the formula for its kind (:mod:`parasite.extract.pairs`:
exact or filament forms near, Neumann's formula by line quadrature far): the far
pairs in compiled loops over the rows on all cores (:mod:`parasite.extract.kernels`),
the near ones listed there and evaluated in a compiled batch over the list on all
cores (:mod:`parasite.extract.near_kernels`; two rare families by numpy). The numpy
block arrangement of the same formulas is kept as the reference
(:mod:`parasite.extract.matrix_numpy`).

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
from parasite.extract import kernels, near_kernels
from parasite.extract.bars import (
    bar_self_inductance,
)
from parasite.extract.images import IMAGE_SIGN, mirror_points
from parasite.extract.pairs import (
    BLOCK_PAIRS,
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


def _setup(arrays: SegmentArrays) -> tuple[np.ndarray, _Conductors, np.ndarray, np.ndarray]:
    """Checked input -> (L with its diagonal set, the conductor table of segments and
    images, index of each segment's image or -1, mirror planes (m, NaN: none))."""
    cond, img_index, mz, diag = tables(arrays)
    n = len(arrays)
    L = np.empty((n, n))
    L[np.arange(n), np.arange(n)] = diag
    return L, cond, img_index, mz


def tables(arrays: SegmentArrays) -> tuple[_Conductors, np.ndarray, np.ndarray, np.ndarray]:
    """Checked input -> (the conductor table of segments and images, index of each
    segment's image or -1, mirror planes (m, NaN: none), the diagonal of L (H))."""
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

    diag = self_inductances(arrays)
    idx = np.nonzero(has)[0]
    if idx.size:
        diag[idx] += IMAGE_SIGN * _mutual(cond, idx, img_index[idx])
    return cond, img_index, mz, diag


def inductance_matrix(arrays: SegmentArrays, *,
                      progress: Callable[[int, int], None] | None = None) -> np.ndarray:
    """Dense partial inductance matrix (N, N) in H, float64, exactly symmetric, images
    included (module docstring). ``progress(pairs_done, pairs_total)`` is called after
    each block (pairs counted with i <= j)."""
    L, cond, img_index, mz = _setup(arrays)
    n = L.shape[0]
    total = n * (n + 1) // 2
    done = n
    if progress is not None:
        progress(done, total)

    # compiled loops over the pairs (parasite.extract.kernels), rows in parallel; the
    # near pairs of each chunk of rows are listed, evaluated by the exact formulas in a
    # compiled batch (parasite.extract.near_kernels), then read back in order by the
    # compiled fill
    for r0, r1 in _row_chunks(n):
        done += _fill_chunk(L, cond, r0, r1, img_index, mz)
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


CHUNK_PAIRS = 2_000_000
"""Upper-triangle pairs per chunk of rows (bounds the list of near pairs; one progress
call per chunk)."""


def _row_chunks(n: int) -> list[tuple[int, int]]:
    """Consecutive row ranges of the strict upper triangle with about CHUNK_PAIRS pairs."""
    out = []
    r0 = 0
    while r0 < n - 1:
        r1, acc = r0, 0
        while r1 < n - 1 and (acc == 0 or acc + (n - 1 - r1) <= CHUNK_PAIRS):
            acc += n - 1 - r1
            r1 += 1
        out.append((r0, r1))
        r0 = r1
    return out


def listed_near(c: _Conductors, img: np.ndarray, mz: np.ndarray, r0: int, r1: int,
                n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The near conductor pairs of rows r0..r1-1 (j > i) as the compiled loops list
    them: per-row offsets (r1 - r0 + 1,) and the pairs' conductors ``pa``, ``pb``."""
    counts = kernels.count_near(r0, r1, n, img, mz, c.u, c.mid, c.length, c.size)
    offsets = np.concatenate([[0], np.cumsum(counts)])
    pa = np.empty(int(offsets[-1]), dtype=np.int64)
    pb = np.empty_like(pa)
    kernels.list_near(r0, r1, n, img, mz, c.u, c.mid, c.length, c.size, offsets, pa, pb)
    return offsets, pa, pb


def _fill_chunk(L: np.ndarray, c: _Conductors, r0: int, r1: int, img: np.ndarray,
                mz: np.ndarray) -> int:
    """L[i, j] for j > i and rows r0..r1-1; returns the number of pairs done."""
    n = L.shape[0]
    offsets, pa, pb = listed_near(c, img, mz, r0, r1, n)
    near = near_values(c, pa, pb)
    kernels.fill_rows(L, r0, r1, img, mz, IMAGE_SIGN, c.u, c.mid, c.d, c.length, c.size,
                      c.w_dir, c.t_dir, c.width, c.thickness, offsets, near)
    return (r1 - r0) * (n - 1) - (r1 - r0) * (r0 + r1 - 1) // 2


def near_values(c: _Conductors, pa: np.ndarray, pb: np.ndarray) -> np.ndarray:
    """The near mutual inductance (H) of conductors (pa[k], pb[k]), pairs listed as near
    by :mod:`parasite.extract.kernels`: compiled, in parallel over the pairs
    (:func:`parasite.extract.near_kernels.near_batch`); the families left out there
    (coaxial round conductors, a bar close to a parallel round one) by
    :func:`parasite.extract.pairs._mutual` in batches of BLOCK_PAIRS on threads."""
    pa = np.ascontiguousarray(pa, dtype=np.int64)
    pb = np.ascontiguousarray(pb, dtype=np.int64)
    out = np.empty(pa.size)
    done = np.zeros(pa.size, dtype=np.bool_)
    if pa.size:
        near_kernels.near_batch(pa, pb, c.start, c.end, c.u, c.length,
                                np.ascontiguousarray(c.round, dtype=np.bool_), c.width,
                                c.thickness, c.radius, c.inner, c.w_dir, c.t_dir, c.size,
                                out, done)
    rest = np.flatnonzero(~done)
    if rest.size:
        out[rest] = near_values_numpy(c, pa[rest], pb[rest])
    return out


def near_values_numpy(c: _Conductors, pa: np.ndarray, pb: np.ndarray) -> np.ndarray:
    """:func:`parasite.extract.pairs._mutual` of the pairs (pa[k], pb[k]) in batches of
    BLOCK_PAIRS, on threads (numpy releases the GIL in its loops): the reference for
    :func:`near_values`."""
    out = np.empty(pa.size)
    starts = list(range(0, pa.size, BLOCK_PAIRS))

    def work(s: int) -> None:
        out[s:s + BLOCK_PAIRS] = _mutual(c, pa[s:s + BLOCK_PAIRS], pb[s:s + BLOCK_PAIRS])

    workers = min(len(starts), _workers())
    if workers <= 1:
        for s in starts:
            work(s)
    else:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            list(pool.map(work, starts))
    return out


def _workers() -> int:
    """Threads for the assembly: the cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)
