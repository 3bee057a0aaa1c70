"""The partial inductance matrix as a linear operator (H): products, diagonal, blocks.

Two implementations of one interface (:class:`InductanceOperator`):

* :class:`DenseInductance`: the dense matrix of :func:`parasite.extract.inductance_matrix`
  (the reference; O(N^2) memory);
* :class:`FastInductance`: exact near pairs as a sparse matrix plus the far field by a
  fast multipole method (Greengard & Rokhlin, "A fast algorithm for particle
  simulations", J. Comput. Phys. 73, 1987; the library ``fmm3dpy``, Laplace kernel
  1/(4 pi r)). The far-field term of a pair is Neumann's formula
  ``M = mu0/(4 pi) (d_a . d_b) E[1/r]`` by 2-point Gauss-Legendre quadrature along both
  centre lines, each point split in two across the conductor's width at ``+-w/sqrt(12)``
  (``width_points``; equal weights): the four points of a conductor have its second
  moments along and across it, so ``E[1/r]`` is right to second order in both
  sections, as the dense path's far rule with its section correction
  (:func:`parasite.extract.pairs.far_mutual`). That is the potential of point sources
  carrying the vector charges ``w_l d_b x_b`` (three densities) at the points of every
  segment, images included. Pairs whose horizontal
  midpoint distance is below the sum of their near radii get their exact entry (the same
  formulas as the dense path, :mod:`parasite.extract.kernels`) and the far-field
  sum's own value for them is subtracted: ``L x = S x + F x - S_F x``. ``S`` is built
  block by block of rows (:mod:`parasite.extract.near_field`; the blocks run through
  :func:`parasite.schedule.run_map`, in process or on a Dask cluster, same bytes) and
  held as a full symmetric CSR matrix; ``S - S_F`` shares its index arrays. With
  ``far_field="grid"`` (the board path's) the horizontal copper's far field is summed
  on layer grids by FFT instead (:mod:`parasite.extract.plane_grid`, its section's
  moments to third order; ``S_F`` the grid's own values), the near radii are at least
  the grid's near distance, and the multipole sums keep the rest (vias; inclined
  copper, whose pairs with every segment are then stored exactly).

The near radius of a segment of length l and section size h is
``max(3.5 l, l + section_ratio h)``; beyond the sum of two radii a pair is far. Without
the split across the width (``width_points=False``, the centre lines only) the far
field leaves out the pairs' section average, about ``(h/D)^2/6`` relative per pair, so
the near radius must then be wide (the default ``section_ratio = 10`` bounds it by
1.7e-3 per pair); with it the remainder is fourth order (the tests check the whole
product against the dense one, docs/scale.md). SI units: m, H.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, Protocol

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import LinearOperator

from geometry.model import SegmentArrays
from parasite.errors import ExtractionError
from parasite.extract import kernels
from parasite.extract.images import IMAGE_SIGN
from parasite.extract.matrix import inductance_matrix, tables
from parasite.extract.near_field import (
    BLOCK_ROWS,
    NearBlock,
    NearPairs,
    assemble,
    entries,
    far_values,
    row_blocks,
)
from parasite.extract.plane_grid import grid_layout, grid_product, grid_radii, plane_grid
from parasite.schedule import run_map, runs_here

BOARD_SECTION_RATIO = 3.0
"""``section_ratio`` of the fast path of ``report`` and ``check``: a pour cell's section is
as wide as it is long, so the default 10 makes nearly every pair of a meshed board near;
at 3 the loop inductances of the benchmark's meshed power stage stay within 1e-4 of the
dense path (benchmarks/bench_board_scale.py, tests/loops/test_loops_operator.py)."""
BOARD_NEAR_SCALE = 0.4
"""``near_scale`` of the same path: the near radii times 0.4 (two equal square cells are
near below 3.2 lengths apart), and at least the grid's near distance
(:data:`parasite.extract.plane_grid.NEAR_SPACINGS`, 6 spacings, 3 cells of the
benchmark's pours). Measured on the benchmark board against the dense matrix with the
grid's far field: a product within 1.06e-5 at 4,674 segments (489 k near pairs;
7.8e-6 at x0.5 with 663 k), 1.24e-5 at 2,101. Before the grid, the far field's points
on the centre lines needed x0.7 for 4.0e-4 (docs/scale.md)."""
BOARD_FAR_FIELD = "grid"
"""The far field of the same path (:data:`FAR_FIELDS`): horizontal copper on layer grids
by FFT. Measured at 4,674 segments: a product of 4 real columns in 0.012 s against
0.57 s by the multipole sums with the points split across the width (1.3e-5), 0.17 s
on the centre lines (4.0e-4); the three loops' GMRES solves in 1.0 s against 25 s.
Vias keep the multipole sums, inclined copper (probe leads) has its pairs stored
exactly, and a board the grid does not fit (more inclined copper than
:data:`parasite.extract.plane_grid.MAX_INCLINED_PAIRS` allows, more than 16 heights)
takes the multipole sums with the split points."""
BOARD_WIDTH_POINTS = True
"""Whether the multipole sums of the same path split the far field's points across the
width (``ACROSS``; vertical copper, and boards the grid does not fit). With the split a
product is within 1.7e-5 of the dense matrix at near radii x0.5 (4,674 segments),
against 4.0e-4 on the centre lines at x0.7, for twice the points per sum."""
BOARD_EPS = 1e-3
"""``eps`` of the multipole sums on the same path. Measured on the benchmark board (4,674
segments): one product within 1.5e-5 of the sums at 1e-10, the loop inductances within
9e-6 of those at 1e-7, the loop solves 4 times quicker than at 1e-7 (2 at 1e-4)
(tests/extract/test_operator.py checks a product at this eps against the dense
matrix). With the far field's points split across the width, 3e-3 gives the same
product error (1.58e-5) 1.25 times quicker."""
FAR_FIELDS = ("multipole", "grid")
"""The far fields of :class:`FastInductance`: ``"multipole"`` (every conductor's points,
fmm3dpy) or ``"grid"`` (horizontal copper on layer grids by FFT,
:mod:`parasite.extract.plane_grid`; vertical copper by multipoles, inclined copper's
pairs exact; a board the grid does not fit, with too much inclined copper or too many
heights, falls back to multipoles)."""
GL2 = 0.5 / np.sqrt(3.0)
"""The 2-point Gauss-Legendre nodes on [-1/2, 1/2] are -GL2, +GL2 (weights 1/2)."""
ACROSS = {True: (-1.0, 1.0), False: (0.0,)}
"""The far field's points of a conductor are ``mid + s GL2 d + t off`` for ``s = +-1``
and each ``t`` here, equal weights (``off`` across the width,
:func:`parasite.extract.kernels.width_offsets`): with ``width_points`` two across the
width (the section's second moment there), else on the centre line."""


class InductanceOperator(Protocol):
    """What consumers of the partial inductance use (H; vectors in A, results in V s)."""

    shape: tuple[int, int]

    def matvec(self, x: np.ndarray) -> np.ndarray:
        """L @ x for x of shape (N,) or (N, k), real or complex."""
        ...

    def diagonal(self) -> np.ndarray:
        """The diagonal of L (N,)."""
        ...

    def block(self, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
        """The dense block L[rows][:, cols]."""
        ...


def as_linear_operator(op: InductanceOperator, dtype: type = float) -> LinearOperator:
    """A scipy LinearOperator for Krylov solvers."""
    return LinearOperator(op.shape, matvec=op.matvec, matmat=op.matvec, dtype=dtype)


class DenseInductance:
    """The dense matrix (the reference)."""

    def __init__(self, L: np.ndarray) -> None:
        self.L = np.asarray(L, dtype=float)
        self.shape = self.L.shape

    @classmethod
    def from_arrays(cls, arrays: SegmentArrays) -> DenseInductance:
        return cls(inductance_matrix(arrays))

    def matvec(self, x: np.ndarray) -> np.ndarray:
        return self.L @ x

    def diagonal(self) -> np.ndarray:
        return np.diag(self.L).copy()

    def block(self, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
        return self.L[np.ix_(rows, cols)]


class FastInductance:
    """Near field exact and sparse, far field by the fast multipole method (module
    docstring). ``eps``: the requested relative precision of the far-field sums."""

    def __init__(self, arrays: SegmentArrays, *, section_ratio: float = 10.0,
                 eps: float = 1e-7, progress: Callable[[int, int], None] | None = None,
                 near_scale: float = 1.0, block_rows: int = BLOCK_ROWS,
                 scheduler: str | Any | None = None, width_points: bool = True,
                 far_field: str = "multipole") -> None:
        if far_field not in FAR_FIELDS:
            raise ExtractionError(f"unknown far field {far_field!r}; one of "
                                  f"{', '.join(FAR_FIELDS)}", key="far_field")
        c, img, mz, diag = tables(arrays)
        n = len(arrays)
        self.shape = (n, n)
        self.eps = eps
        self.section_ratio = section_ratio
        self._c, self._img, self._mz, self._diag = c, img, mz, diag
        self.grid = plane_grid(c, n) if far_field == "grid" else None
        self.far_field = "grid" if self.grid is not None else "multipole"
        radius = _radii(c, n, section_ratio, near_scale, self.grid)
        self.near_radius = radius
        self.near_scale = near_scale
        # the near field block by block of rows (parasite.extract.near_field), in this
        # process or on the Dask cluster of ``scheduler`` (parasite.schedule)
        self.width_points = width_points
        ts = np.array(ACROSS[width_points])
        self._slots = [(sk, tk) for sk in (-1.0, 1.0) for tk in ts]
        task = NearBlock(c, img, mz, NearPairs(c.mid[:n, :2], radius), ts, self.grid)
        blocks = row_blocks(n, block_rows)
        if progress is not None and runs_here(scheduler):
            pieces = []
            for b in blocks:
                pieces += run_map(task, [b], scheduler=scheduler)
                progress(b[1], n)
        else:
            pieces = run_map(task, blocks, scheduler=scheduler)
            if progress is not None:
                progress(n, n)
        del task
        diag_idx = np.arange(n, dtype=np.int64)
        off = kernels.width_offsets(c)
        f_diag = far_values(c, img, ts, self.grid, diag_idx, diag_idx)
        self.near, self._corr = assemble(pieces, n, diag, f_diag)
        # the far field's points: segments, then their images; len(_slots) per conductor
        has = img >= 0
        self._src = np.concatenate([np.flatnonzero(np.ones(n, bool)), img[has]])
        self._n_img = int(has.sum())
        self._has = has
        m, d, o = c.mid[self._src], c.d[self._src], off[self._src]
        self._points = np.concatenate([m + sk * GL2 * d + tk * o
                                       for sk, tk in self._slots]).T.copy()
        self._d = d

    @property
    def pairs_near(self) -> int:
        """Stored near entries (off-diagonal, both triangles)."""
        return int(self.near.nnz - self.shape[0])

    def diagonal(self) -> np.ndarray:
        return self._diag.copy()

    def block(self, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
        rr, cc = np.meshgrid(np.asarray(rows, np.int64), np.asarray(cols, np.int64),
                             indexing="ij")
        # the upper triangle's formula for both (the dense matrix mirrors it)
        ii, jj = np.minimum(rr, cc).ravel(), np.maximum(rr, cc).ravel()
        out = np.empty(ii.size)
        off = ii != jj
        out[off] = entries(self._c, self._img, self._mz, ii[off], jj[off])
        out[~off] = self._diag[ii[~off]]
        return out.reshape(rr.shape)

    def matvec(self, x: np.ndarray) -> np.ndarray:
        """L x for x (N,) or (N, k), real or complex: every real column (the real and
        imaginary parts of a complex one) in one multipole call of 6 k densities."""
        x = np.asarray(x)
        cols = x.reshape(x.shape[0], -1)
        parts = np.hstack([cols.real, cols.imag]) if np.iscomplexobj(cols) else cols
        parts = np.asarray(parts, dtype=float)
        y = self._corr @ parts
        if self.grid is not None:
            y += grid_product(self.grid, parts, self._img, self._c.d, IMAGE_SIGN)
        y += self._far(parts)
        if np.iscomplexobj(cols):
            y = y[:, :cols.shape[1]] + 1j * y[:, cols.shape[1]:]
        return y.reshape(x.shape)

    def _far(self, x: np.ndarray) -> np.ndarray:
        """The point-source sum for every entry (direct and symmetrised images), H A,
        for the real columns of ``x`` (N, m) at once.

        One multipole call per direction component ``c`` of the current: the term of a
        pair is ``d_a . d_b``, so component ``c`` of the sources' vector charges is
        needed only at the points of segments (and images) whose direction has a
        component ``c``; on a board of x- and y-directed cells each call has half the
        points (two calls of N/2 points instead of one of N with twice the densities)."""
        import fmm3dpy

        n = self.shape[0]
        k = self._src.size
        m = x.shape[1]
        points = len(self._slots)
        xs = np.concatenate([x, x[self._has]])  # (K, m): each image carries its segment's
        direct = np.zeros((m, n))
        a_term = np.zeros((m, n))  # M(i, j') x_j: images' charges at the segments' points
        b_img = np.zeros((m, k - n))  # M(i', j) x_j: segments' charges at the images' points
        on_grid = (self.grid.horizontal[self._src] if self.grid is not None
                   else np.zeros(k, dtype=bool))
        for comp in range(3):
            # conductors (segments, images) with that component, the grid's left out
            sel = np.flatnonzero((self._d[:, comp] != 0.0) & ~on_grid)
            if sel.size == 0:
                continue
            seg, img = sel[sel < n], sel[sel >= n]
            pts = np.concatenate([self._points[:, p * k + sel] for p in range(points)], axis=1)
            q = (self._d[sel, comp] / points)[:, None] * xs[sel]  # (s, m) vector charges
            slots = [(seg.size, 0)] + ([(img.size, 1)] if img.size else [])
            dens = np.zeros((m, len(slots), points * sel.size))
            is_seg = sel < n
            for col, (count, slot) in enumerate(slots):
                if count == 0:
                    continue
                mask = is_seg if slot == 0 else ~is_seg
                qc = np.where(mask[:, None], q, 0.0).T  # (m, s)
                for p in range(points):
                    dens[:, col, p * sel.size:(p + 1) * sel.size] = qc
            nd = m * len(slots)
            charges = dens.reshape(nd, points * sel.size)
            out = fmm3dpy.lfmm3d(eps=self.eps, sources=pts, pg=1, nd=nd,
                                 charges=charges[0] if nd == 1 else charges)
            pot = (np.asarray(out.pot).reshape(m, len(slots), points, sel.size)
                   * (4.0 * np.pi)).sum(axis=2)  # every point of a conductor
            w = self._d[sel, comp] / points  # weights 1/points of the points
            direct[:, seg] += w[is_seg] * pot[:, 0, is_seg]
            if img.size:
                a_term[:, seg] += w[is_seg] * pot[:, 1, is_seg]
                b_img[:, img - n] += w[~is_seg] * pot[:, 0, ~is_seg]
        b_term = np.zeros((m, n))
        b_term[:, self._has] = b_img
        return (1e-7 * (direct + IMAGE_SIGN * 0.5 * (a_term + b_term))).T


def _radii(c: Any, n: int, section_ratio: float, near_scale: float,
           grid: Any | None) -> np.ndarray:
    """The near radii (m) of the ``n`` segments of the conductor table ``c``
    (module docstring); with a grid (a :class:`parasite.extract.plane_grid.PlaneGrid` or
    its ``Layout``), :func:`parasite.extract.plane_grid.grid_radii`."""
    radius = near_scale * np.maximum(3.5 * c.length[:n], c.length[:n] + section_ratio * c.size[:n])
    if grid is None:
        return radius
    return grid_radii(radius, c.mid[:n, :2], grid.horizontal, grid.inclined, grid.h)


def near_radius(arrays: SegmentArrays, section_ratio: float = 10.0,
                near_scale: float = 1.0, far_field: str = "multipole") -> np.ndarray:
    """The near radius of every segment (m) as :class:`FastInductance` sets it:
    ``near_scale max(3.5 l, l + section_ratio h)`` (module docstring; h the section
    size: the larger of width and thickness of a bar, 2 radius for a round conductor),
    with the grid's far field at least half its near distance on horizontal copper."""
    n = len(arrays)
    c = tables(arrays)[0]
    layout = (grid_layout(c.u, c.mid, c.length, c.width, n) if far_field == "grid"
              else None)
    return _radii(c, n, section_ratio, near_scale, layout)


def count_near_pairs(arrays: SegmentArrays, section_ratio: float = 10.0,
                     near_scale: float = 1.0, far_field: str = "multipole") -> int:
    """How many pairs ``i < j`` :class:`FastInductance` stores as exact near entries
    (the same search, counted without evaluating them)."""
    n = len(arrays)
    if n == 0:
        return 0
    xy = 0.5 * (arrays.start + arrays.end)[:, :2]
    return NearPairs(xy, near_radius(arrays, section_ratio, near_scale, far_field)).count()


class SubOperator:
    """The principal sub-operator ``L[idx][:, idx]`` of an operator (the copper of one
    loop's nets): products embed the vector in the whole board and read back ``idx``."""

    def __init__(self, op: InductanceOperator, idx: np.ndarray) -> None:
        self.op = op
        self.idx = np.asarray(idx, dtype=np.int64)
        self.shape = (self.idx.size, self.idx.size)
        self._near: sp.csr_matrix | None = None

    @property
    def near(self) -> sp.csr_matrix:
        """The operator's exact near field on ``idx`` (H), copied on first use only (the
        loop solves do not need it); AttributeError when the operator has none, so that
        ``getattr(sub, "near", None)`` reads as for the operator itself."""
        whole = getattr(self.op, "near", None)
        if whole is None:
            raise AttributeError("near")
        if self._near is None:
            self._near = whole[self.idx][:, self.idx].tocsr()
        return self._near

    def matvec(self, x: np.ndarray) -> np.ndarray:
        x = np.asarray(x)
        full = np.zeros((self.op.shape[0],) + x.shape[1:], dtype=x.dtype)
        full[self.idx] = x
        return np.asarray(self.op.matvec(full))[self.idx]

    def diagonal(self) -> np.ndarray:
        return self.op.diagonal()[self.idx]

    def block(self, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
        return self.op.block(self.idx[np.asarray(rows)], self.idx[np.asarray(cols)])


def fast_or_dense(arrays: SegmentArrays, *, dense_below: int = 2000) -> InductanceOperator:
    """The dense reference for small boards, the fast operator above ``dense_below``."""
    if len(arrays) < 1:
        raise ExtractionError("no segments", key="segments")
    if len(arrays) < dense_below:
        return DenseInductance.from_arrays(arrays)
    return FastInductance(arrays)
