"""The partial inductance matrix as a linear operator (H): products, diagonal, blocks.

Two implementations of one interface (:class:`InductanceOperator`):

* :class:`DenseInductance`: the dense matrix of :func:`parasite.extract.inductance_matrix`
  (the reference; O(N^2) memory);
* :class:`FastInductance`: exact near pairs as a sparse matrix plus the far field by a
  fast multipole method (Greengard & Rokhlin, "A fast algorithm for particle
  simulations", J. Comput. Phys. 73, 1987; the library ``fmm3dpy``, Laplace kernel
  1/(4 pi r)). The far-field term of a pair is Neumann's formula
  ``M = mu0/(4 pi) (d_a . d_b) E[1/r]`` by 2-point Gauss-Legendre quadrature along both
  centre lines (the rule the dense path uses for far pairs), that is the potential of
  point sources carrying the vector charges ``w_l d_b x_b`` (three densities) at the
  quadrature points of every segment, images included. Pairs whose horizontal
  midpoint distance is below the sum of their near radii get their exact entry (the same
  formulas as the dense path, :mod:`parasite.extract.kernels`) and the far-field
  sum's own value for them is subtracted: ``L x = S x + F x - S_F x``.

The near radius of a segment of length l and section size h is
``max(3.5 l, l + section_ratio h)``; beyond the sum of two radii a pair is far by the dense path's
rules (:data:`parasite.extract.pairs.FAR_RULES`) except for its second-order section
correction, below ``(h/D)^2/6`` relative per pair, which the default
``section_ratio = 10`` bounds by 1.7e-3 per pair (the tests check the whole product
against the dense one, docs/scale.md). SI units: m, H.
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
from parasite.extract.matrix import inductance_matrix, near_values, tables
from parasite.extract.pairs import _Conductors

BOARD_SECTION_RATIO = 3.0
"""``section_ratio`` of the fast path of ``report`` and ``check``: a pour cell's section is
as wide as it is long, so the default 10 makes nearly every pair of a meshed board near;
at 3 the loop inductances of the benchmark's meshed power stage stay within 1e-4 of the
dense path (benchmarks/bench_board_scale.py, tests/loops/test_loops_operator.py)."""
BOARD_NEAR_SCALE = 0.6
"""``near_scale`` of the same path: the near radii times 0.6, so that two equal cells
are near below 4.2 lengths apart (the dense path's far rule starts at 3.5); pairs
beyond take the 2-point far-field rule. On the benchmark board (4,456 segments) the
loop inductances stay within 3e-4 of the dense path with 2.3 times fewer near
pairs than at 1.0 (2.6e-5 less accurate products: 4.5e-4 relative)."""
BOARD_EPS = 1e-3
"""``eps`` of the multipole sums on the same path. Measured on the benchmark board (4,674
segments): one product within 1.5e-5 of the sums at 1e-10, the loop inductances within
9e-6 of those at 1e-7, the loop solves 4 times quicker than at 1e-7 (2 at 1e-4):
well inside the near field's own 3.6e-4 (``BOARD_NEAR_SCALE``) and the 1e-4 asked of a
product (tests/extract/test_operator.py checks a product at this eps against the dense
matrix)."""
GL2 = 0.5 / np.sqrt(3.0)
"""The 2-point Gauss-Legendre nodes on [-1/2, 1/2] are -GL2, +GL2 (weights 1/2)."""


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


def _near_pairs(xy: np.ndarray, radius: np.ndarray,
                chunk: int = 2048) -> tuple[np.ndarray, np.ndarray]:
    """Pairs i < j whose horizontal midpoint distance is below radius_i + radius_j (a
    superset of them: each segment's ball of twice its radius, found by a k-d tree),
    searched ``chunk`` segments at a time so that the tree's lists stay small."""
    from scipy.spatial import cKDTree

    n = len(xy)
    tree = cKDTree(xy)
    keys = []
    for r0 in range(0, n, chunk):
        r1 = min(n, r0 + chunk)
        hits = tree.query_ball_point(xy[r0:r1], 2.0 * radius[r0:r1], return_sorted=False)
        counts = np.fromiter((len(h) for h in hits), dtype=np.int64, count=len(hits))
        jj = np.fromiter((j for h in hits for j in h), dtype=np.int64, count=int(counts.sum()))
        ii = np.repeat(np.arange(r0, r1, dtype=np.int64), counts)
        a, b = np.minimum(ii, jj), np.maximum(ii, jj)
        keep = a < b
        keys.append(a[keep] * n + b[keep])
    key = np.unique(np.concatenate(keys)) if keys else np.zeros(0, np.int64)
    return key // n, key % n


class FastInductance:
    """Near field exact and sparse, far field by the fast multipole method (module
    docstring). ``eps``: the requested relative precision of the far-field sums."""

    def __init__(self, arrays: SegmentArrays, *, section_ratio: float = 10.0,
                 eps: float = 1e-7, progress: Callable[[int, int], None] | None = None,
                 chunk: int = 200_000, near_scale: float = 1.0) -> None:
        c, img, mz, diag = tables(arrays)
        n = len(arrays)
        self.shape = (n, n)
        self.eps = eps
        self.section_ratio = section_ratio
        self._c, self._img, self._mz, self._diag = c, img, mz, diag
        radius = near_scale * np.maximum(3.5 * c.length[:n],
                                         c.length[:n] + section_ratio * c.size[:n])
        self.near_radius = radius
        self.near_scale = near_scale
        ii, jj = _near_pairs(c.mid[:n, :2], radius)
        # exact near entries, ``chunk`` pairs at a time (bounded temporaries, progress)
        exact = np.empty(ii.size)
        for p0 in range(0, ii.size, chunk):
            p1 = min(ii.size, p0 + chunk)
            exact[p0:p1] = entries(c, img, mz, ii[p0:p1], jj[p0:p1])
            if progress is not None:
                progress(p1, ii.size)
        diag_idx = np.arange(n, dtype=np.int64)
        f_off = kernels.two_point_entries(ii, jj, img, IMAGE_SIGN, c.mid, c.d)
        f_diag = kernels.two_point_entries(diag_idx, diag_idx, img, IMAGE_SIGN, c.mid, c.d)
        rows = np.concatenate([ii, jj, diag_idx])
        cols = np.concatenate([jj, ii, diag_idx])
        self.near = sp.csr_matrix((np.concatenate([exact, exact, diag]), (rows, cols)),
                                  shape=(n, n))
        corr = sp.csr_matrix((np.concatenate([exact - f_off, exact - f_off, diag - f_diag]),
                              (rows, cols)), shape=(n, n))
        self._corr = corr
        # quadrature points: segments, then their images (2 per conductor)
        has = img >= 0
        self._src = np.concatenate([np.flatnonzero(np.ones(n, bool)), img[has]])
        self._n_img = int(has.sum())
        self._has = has
        m, d = c.mid[self._src], c.d[self._src]
        self._points = np.concatenate([m - GL2 * d, m + GL2 * d]).T.copy()  # (3, 2 K)
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
        y = self._far(parts) + self._corr @ parts
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
        xs = np.concatenate([x, x[self._has]])  # (K, m): each image carries its segment's
        direct = np.zeros((m, n))
        a_term = np.zeros((m, n))  # M(i, j') x_j: images' charges at the segments' points
        b_img = np.zeros((m, k - n))  # M(i', j) x_j: segments' charges at the images' points
        for comp in range(3):
            sel = np.flatnonzero(self._d[:, comp] != 0.0)  # conductors (segments, images)
            if sel.size == 0:
                continue
            seg, img = sel[sel < n], sel[sel >= n]
            pts = np.concatenate([self._points[:, sel], self._points[:, k + sel]], axis=1)
            q = (0.5 * self._d[sel, comp])[:, None] * xs[sel]  # (s, m) vector charges
            slots = [(seg.size, 0)] + ([(img.size, 1)] if img.size else [])
            dens = np.zeros((m, len(slots), 2 * sel.size))
            is_seg = sel < n
            for col, (count, slot) in enumerate(slots):
                if count == 0:
                    continue
                mask = is_seg if slot == 0 else ~is_seg
                qc = np.where(mask[:, None], q, 0.0).T  # (m, s)
                dens[:, col, :sel.size] = qc
                dens[:, col, sel.size:] = qc
            nd = m * len(slots)
            charges = dens.reshape(nd, 2 * sel.size)
            out = fmm3dpy.lfmm3d(eps=self.eps, sources=pts, pg=1, nd=nd,
                                 charges=charges[0] if nd == 1 else charges)
            pot = np.asarray(out.pot).reshape(m, len(slots), 2 * sel.size) * (4.0 * np.pi)
            pot = pot[:, :, :sel.size] + pot[:, :, sel.size:]  # both points of a conductor
            w = 0.5 * self._d[sel, comp]  # weights 1/2 of the two points
            direct[:, seg] += w[is_seg] * pot[:, 0, is_seg]
            if img.size:
                a_term[:, seg] += w[is_seg] * pot[:, 1, is_seg]
                b_img[:, img - n] += w[~is_seg] * pot[:, 0, ~is_seg]
        b_term = np.zeros((m, n))
        b_term[:, self._has] = b_img
        return (1e-7 * (direct + IMAGE_SIGN * 0.5 * (a_term + b_term))).T


def near_radius(arrays: SegmentArrays, section_ratio: float = 10.0,
                near_scale: float = 1.0) -> np.ndarray:
    """The near radius of every segment (m): ``near_scale max(3.5 l, l + section_ratio h)``
    (module docstring), from the segment arrays alone (h: the larger of width and
    thickness, the section size of a bar)."""
    length = np.linalg.norm(arrays.end - arrays.start, axis=1)
    size = np.maximum(arrays.width, arrays.thickness)
    return near_scale * np.maximum(3.5 * length, length + section_ratio * size)


def count_near_pairs(arrays: SegmentArrays, section_ratio: float = 10.0,
                     near_scale: float = 1.0) -> int:
    """About how many pairs ``i < j`` :class:`FastInductance` would store as exact near
    entries (the same k-d tree search, counted without listing them)."""
    from scipy.spatial import cKDTree

    n = len(arrays)
    if n == 0:
        return 0
    xy = 0.5 * (arrays.start + arrays.end)[:, :2]
    radius = near_radius(arrays, section_ratio, near_scale)
    counts = cKDTree(xy).query_ball_point(xy, 2.0 * radius, return_length=True)
    return int((np.sum(counts) - n) // 2)


class SubOperator:
    """The principal sub-operator ``L[idx][:, idx]`` of an operator (the copper of one
    loop's nets): products embed the vector in the whole board and read back ``idx``."""

    def __init__(self, op: InductanceOperator, idx: np.ndarray) -> None:
        self.op = op
        self.idx = np.asarray(idx, dtype=np.int64)
        self.shape = (self.idx.size, self.idx.size)
        self._near: sp.csr_matrix | None = None

    def __getattr__(self, name: str) -> Any:
        # ``near`` (the operator's exact near field on ``idx``), only when the operator
        # has one, copied on first use only: the loop solves do not need it
        if name == "near" and getattr(self.op, "near", None) is not None:
            if self._near is None:
                self._near = self.op.near[self.idx][:, self.idx].tocsr()  # type: ignore[attr-defined]
            return self._near
        raise AttributeError(name)

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
