"""The exact near field of the inductance operator, built block by block of rows.

A pair of segments is near when the horizontal distance of their midpoints is below
the sum of their near radii (:mod:`parasite.extract.operator`). The pairs are found
and evaluated for one block of consecutive rows at a time (:class:`NearBlock`, run
through :func:`parasite.schedule.run_map`: in this process, or on a Dask cluster): the
candidates of a block by k-d trees (the segments grouped by near radius within a
factor 2, so that a ball of ``r_i + R_class`` holds at most a few times the pairs it
must; Bentley, "Multidimensional binary search trees used for associative searching",
CACM 18, 1975, as ``scipy.spatial.cKDTree``), kept when within the sum of the radii;
their exact entries (the dense path's formulas) and the value of the far-field sum
for the same pairs (the far field's points, :func:`parasite.extract.kernels.point_entries`).
A block returns its upper triangle (``j > i``) as a compact CSR piece (int32 columns,
float64 data); :func:`assemble` writes the full symmetric CSR matrix from the pieces in
one compiled pass (no global pair list, every pair evaluated once), and the correction
matrix (exact minus far-field value) with its own data array on the same column
indices. SI units: m, H.
"""

from __future__ import annotations

import sys
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any

import numba as nb
import numpy as np
import scipy.sparse as sp

from parasite.extract import kernels
from parasite.extract.images import IMAGE_SIGN
from parasite.extract.matrix import near_values
from parasite.extract.pairs import _Conductors
from parasite.extract.plane_grid import PlaneGrid, grid_entries

BLOCK_ROWS = 2048
"""Rows (segments) per block of the near field: bounds each block's candidate list."""
_SLACK = 1.0 + 1e-9
"""The k-d trees' balls are this much wider than the rule, so that their own rounding
never loses a pair that the rule (evaluated here) keeps."""


def entries(c: _Conductors, img: np.ndarray, mz: np.ndarray, ii: np.ndarray,
            jj: np.ndarray) -> np.ndarray:
    """Exact L[ii[k], jj[k]] for pairs with ii != jj (H), by the dense path's formulas."""
    ii = np.ascontiguousarray(ii, dtype=np.int64)
    jj = np.ascontiguousarray(jj, dtype=np.int64)
    counts = kernels.count_near_pairs(ii, jj, img, mz, c.u, c.mid, c.length, c.size)
    offsets = np.concatenate([[0], np.cumsum(counts)]).astype(np.int64)
    pa = np.empty(int(offsets[-1]), dtype=np.int64)
    pb = np.empty_like(pa)
    kernels.list_near_pairs(ii, jj, img, mz, c.u, c.mid, c.length, c.size, offsets, pa, pb)
    near = near_values(c, pa, pb)
    out = np.empty(ii.size)
    kernels.fill_pairs(ii, jj, out, img, mz, IMAGE_SIGN, c.u, c.mid, c.d, c.length, c.size,
                       c.w_dir, c.t_dir, c.width, c.thickness, offsets, near)
    return out


class NearPairs:
    """The pairs ``i < j`` whose horizontal midpoint distance is below
    ``radius_i + radius_j`` (m), listed for a block of rows at a time."""

    def __init__(self, xy: np.ndarray, radius: np.ndarray) -> None:
        self.xy = np.ascontiguousarray(xy, dtype=float)
        self.radius = np.ascontiguousarray(radius, dtype=float)
        n = self.radius.size
        if n and not np.all(self.radius > 0):
            raise ValueError("near radii must be positive")
        scale = self.radius.min() if n else 1.0
        self.group = np.floor(np.log2(self.radius / scale)).astype(np.int64) if n else \
            np.zeros(0, np.int64)
        self.members = [np.flatnonzero(self.group == g) for g in np.unique(self.group)]
        self.r_max = np.array([self.radius[m].max() for m in self.members])
        self._trees: list[Any] | None = None

    def __getstate__(self) -> dict[str, Any]:
        state = self.__dict__.copy()
        state["_trees"] = None  # rebuilt where used
        return state

    def _group_trees(self) -> list[Any]:
        from scipy.spatial import cKDTree

        if self._trees is None:
            self._trees = [cKDTree(self.xy[m]) for m in self.members]
        return self._trees

    def upper(self, r0: int, r1: int) -> tuple[np.ndarray, np.ndarray]:
        """(ii, jj) int64: the near pairs with ``r0 <= i < r1`` and ``j > i``, sorted by
        row then column."""
        from scipy.spatial import cKDTree

        trees = self._group_trees()
        xy, radius = self.xy, self.radius
        rows = np.arange(r0, r1, dtype=np.int64)
        found_i, found_j = [], []
        for g in np.unique(self.group[r0:r1]):
            ra = rows[self.group[r0:r1] == g]
            sub = cKDTree(xy[ra])
            r_a = radius[ra].max()
            for members, tree, r_c in zip(self.members, trees, self.r_max, strict=True):
                hit = sub.sparse_distance_matrix(tree, (r_a + r_c) * _SLACK,
                                                 output_type="ndarray")
                i = ra[hit["i"]]
                j = members[hit["j"]]
                keep = j > i
                i, j = i[keep], j[keep]
                dx = xy[i, 0] - xy[j, 0]
                dy = xy[i, 1] - xy[j, 1]
                keep = np.sqrt(dx * dx + dy * dy) < radius[i] + radius[j]
                found_i.append(i[keep])
                found_j.append(j[keep])
        if not found_i:
            return np.zeros(0, np.int64), np.zeros(0, np.int64)
        ii, jj = np.concatenate(found_i), np.concatenate(found_j)
        order = np.lexsort((jj, ii))
        return ii[order], jj[order]

    def count(self, block_rows: int = BLOCK_ROWS) -> int:
        """The number of near pairs ``i < j``."""
        n = self.radius.size
        return sum(self.upper(r0, min(n, r0 + block_rows))[0].size
                   for r0 in range(0, n, block_rows))


@dataclass(frozen=True)
class NearPiece:
    """Rows ``r0..r1-1`` of the near field's strict upper triangle as CSR: row k's
    columns ``indices[indptr[k]:indptr[k+1]]`` (ascending), the exact entries (H) and
    the corrections (exact minus the far-field sum's value, H)."""

    r0: int
    r1: int
    indptr: np.ndarray  # (r1 - r0 + 1,) int64
    indices: np.ndarray  # int32
    exact: np.ndarray  # float64
    corr: np.ndarray  # float64


@contextmanager
def _compiled_threads() -> Iterator[None]:
    """Inside a Dask worker, the compiled loops on one thread (the cluster's
    parallelism is its workers, one per core; docs/scale.md); here, unchanged."""
    dist = sys.modules.get("distributed")
    on_worker = False
    if dist is not None:
        try:
            dist.get_worker()
            on_worker = True
        except ValueError:
            pass
    if not on_worker:
        yield
        return
    before = nb.get_num_threads()
    nb.set_num_threads(1)
    try:
        yield
    finally:
        nb.set_num_threads(before)


class NearBlock:
    """The work of one block of rows (picklable, for :func:`parasite.schedule.run_map`):
    its near pairs, their exact entries and far-field values."""

    def __init__(self, c: _Conductors, img: np.ndarray, mz: np.ndarray,
                 pairs: NearPairs, ts: np.ndarray, grid: PlaneGrid | None = None) -> None:
        self.c, self.img, self.mz, self.pairs = c, img, mz, pairs
        self.ts = ts  # the far field's points across the width (operator.FastInductance)
        self.grid = grid  # the far field of horizontal copper on layer grids, or None

    def __call__(self, rows: tuple[int, int]) -> NearPiece:
        r0, r1 = rows
        c = self.c
        with _compiled_threads():
            ii, jj = self.pairs.upper(r0, r1)
            exact = entries(c, self.img, self.mz, ii, jj)
            far = far_values(c, self.img, self.ts, self.grid, ii, jj)
        indptr = np.zeros(r1 - r0 + 1, dtype=np.int64)
        np.cumsum(np.bincount(ii - r0, minlength=r1 - r0), out=indptr[1:])
        return NearPiece(r0, r1, indptr, jj.astype(np.int32), exact, exact - far)


def far_values(c: _Conductors, img: np.ndarray, ts: np.ndarray, grid: PlaneGrid | None,
               ii: np.ndarray, jj: np.ndarray) -> np.ndarray:
    """What the operator's far field gives for entries (ii[k], jj[k]) (H): with a grid,
    the grid's value (:func:`parasite.extract.plane_grid.grid_entries`) for pairs of
    segments on it and 0 for a segment on it with one off it (neither sum holds that
    pair); else, and for pairs off the grid, the points'
    (:func:`parasite.extract.kernels.point_entries`)."""
    far = kernels.point_entries(ii, jj, img, IMAGE_SIGN, c.mid, c.d, kernels.width_offsets(c),
                                ts)
    if grid is not None:
        on_i, on_j = grid.horizontal[ii], grid.horizontal[jj]
        both = on_i & on_j
        far[on_i != on_j] = 0.0
        if both.any():
            far[both] = grid_entries(grid, ii[both], jj[both], img, c.d, IMAGE_SIGN)
    return far


def row_blocks(n: int, block_rows: int = BLOCK_ROWS) -> list[tuple[int, int]]:
    """Consecutive row ranges covering ``0..n-1``."""
    return [(r0, min(n, r0 + block_rows)) for r0 in range(0, n, block_rows)]


@nb.njit(cache=True)
def _fill(r0: int, indptr: np.ndarray, indices: np.ndarray, exact: np.ndarray,
          corr: np.ndarray, diag: np.ndarray, corr_diag: np.ndarray, cursor: np.ndarray,
          out_idx: np.ndarray, out_near: np.ndarray, out_corr: np.ndarray) -> None:
    """Write the rows of one piece into the full CSR arrays: each row's diagonal and
    upper entries after its lower ones (written earlier from the rows above), and
    every upper entry mirrored into its column's row at that row's cursor. Called on
    the pieces in row order, this leaves every row's columns ascending."""
    for k in range(indptr.size - 1):
        i = r0 + k
        p = cursor[i]
        out_idx[p] = i
        out_near[p] = diag[i]
        out_corr[p] = corr_diag[i]
        p += 1
        for q in range(indptr[k], indptr[k + 1]):
            j = indices[q]
            out_idx[p] = j
            out_near[p] = exact[q]
            out_corr[p] = corr[q]
            p += 1
            t = cursor[j]
            out_idx[t] = i
            out_near[t] = exact[q]
            out_corr[t] = corr[q]
            cursor[j] = t + 1
        cursor[i] = p


def assemble(pieces: list[NearPiece], n: int, diag: np.ndarray,
             far_diag: np.ndarray) -> tuple[sp.csr_matrix, sp.csr_matrix]:
    """(near, corr): the full symmetric CSR matrices (n, n) of the exact near field
    (diagonal ``diag``) and of its correction (diagonal ``diag - far_diag``), sharing
    their index arrays. ``pieces`` cover rows 0..n-1 in order; they are emptied."""
    upper = np.zeros(n, dtype=np.int64)
    lower = np.zeros(n, dtype=np.int64)
    r = 0
    for piece in pieces:
        if piece.r0 != r:
            raise ValueError(f"near-field pieces out of order at row {r}")
        upper[piece.r0:piece.r1] = np.diff(piece.indptr)
        lower += np.bincount(piece.indices, minlength=n)
        r = piece.r1
    if r != n:
        raise ValueError(f"near-field pieces end at row {r}, not {n}")
    counts = lower + 1 + upper
    del upper
    nnz = int(counts.sum())
    idx_type = np.int32 if nnz < 2**31 - 1 and n < 2**31 - 1 else np.int64
    indptr = np.zeros(n + 1, dtype=idx_type)
    np.cumsum(counts, out=indptr[1:])
    del counts, lower
    cursor = indptr[:-1].astype(np.int64)  # row i's next free slot (lower entries first)
    out_idx = np.empty(nnz, dtype=idx_type)
    out_near = np.empty(nnz)
    out_corr = np.empty(nnz)
    corr_diag = diag - far_diag
    while pieces:
        piece = pieces.pop(0)
        _fill(piece.r0, piece.indptr, piece.indices.astype(idx_type, copy=False), piece.exact,
              piece.corr, diag, corr_diag, cursor, out_idx, out_near, out_corr)
        del piece
    near = sp.csr_matrix((out_near, out_idx, indptr), shape=(n, n))
    corr = sp.csr_matrix((out_corr, near.indices, near.indptr), shape=(n, n))
    return near, corr
