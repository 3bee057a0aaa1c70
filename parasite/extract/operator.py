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

from typing import Protocol

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import LinearOperator

from geometry.model import SegmentArrays
from parasite.errors import ExtractionError
from parasite.extract import kernels
from parasite.extract.images import IMAGE_SIGN
from parasite.extract.matrix import inductance_matrix, near_values, tables
from parasite.extract.pairs import _Conductors

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


def _near_pairs(xy: np.ndarray, radius: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Pairs i < j whose horizontal midpoint distance is below radius_i + radius_j (a
    superset of them: each segment's ball of twice its radius, found by a k-d tree)."""
    from scipy.spatial import cKDTree

    tree = cKDTree(xy)
    hits = tree.query_ball_point(xy, 2.0 * radius, return_sorted=False)
    counts = np.fromiter((len(h) for h in hits), dtype=np.int64, count=len(hits))
    jj = np.fromiter((j for h in hits for j in h), dtype=np.int64, count=int(counts.sum()))
    ii = np.repeat(np.arange(len(hits), dtype=np.int64), counts)
    a, b = np.minimum(ii, jj), np.maximum(ii, jj)
    keep = a < b
    key = np.unique(a[keep] * len(hits) + b[keep])
    return key // len(hits), key % len(hits)


class FastInductance:
    """Near field exact and sparse, far field by the fast multipole method (module
    docstring). ``eps``: the requested relative precision of the far-field sums."""

    def __init__(self, arrays: SegmentArrays, *, section_ratio: float = 10.0,
                 eps: float = 1e-7) -> None:
        c, img, mz, diag = tables(arrays)
        n = len(arrays)
        self.shape = (n, n)
        self.eps = eps
        self._c, self._img, self._mz, self._diag = c, img, mz, diag
        radius = np.maximum(3.5 * c.length[:n], c.length[:n] + section_ratio * c.size[:n])
        self.near_radius = radius
        ii, jj = _near_pairs(c.mid[:n, :2], radius)
        exact = entries(c, img, mz, ii, jj)
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
        x = np.asarray(x)
        if x.ndim == 2:
            return np.stack([self.matvec(x[:, k]) for k in range(x.shape[1])], axis=1)
        if np.iscomplexobj(x):
            return self.matvec(x.real) + 1j * self.matvec(x.imag)
        return self._far(np.asarray(x, dtype=float)) + self._corr @ x

    def _far(self, x: np.ndarray) -> np.ndarray:
        """The point-source sum for every entry (direct and symmetrised images), H A."""
        import fmm3dpy

        n = self.shape[0]
        k = self._src.size
        xs = np.concatenate([x, x[self._has]])
        q = 0.5 * self._d * xs[:, None]  # (K, 3) vector charge per point of a conductor
        dens = np.zeros((6, 2 * k))
        real = np.zeros(k, bool)
        real[:n] = True
        for part in (0, 1):  # densities 0-2: segments; 3-5: images
            sl = slice(part * k, (part + 1) * k)
            dens[0:3, sl] = np.where(real[:, None], q, 0.0).T
            dens[3:6, sl] = np.where(real[:, None], 0.0, q).T
        out = fmm3dpy.lfmm3d(eps=self.eps, sources=self._points, charges=dens, pg=1, nd=6)
        pot = out.pot * (4.0 * np.pi)  # 1/r instead of 1/(4 pi r)
        pot = pot[:, :k] + pot[:, k:]  # both points of every conductor (weights 1/2 below)
        w = 0.5 * self._d.T  # (3, K)
        direct = np.sum(w[:, :n] * pot[0:3, :n], axis=0)
        a_term = np.sum(w[:, :n] * pot[3:6, :n], axis=0)  # M(i, j') x_j
        b_img = np.sum(w[:, n:] * pot[0:3, n:], axis=0)  # M(i', j) x_j at the images
        b_term = np.zeros(n)
        b_term[self._has] = b_img
        return 1e-7 * (direct + IMAGE_SIGN * 0.5 * (a_term + b_term))


def fast_or_dense(arrays: SegmentArrays, *, dense_below: int = 2000) -> InductanceOperator:
    """The dense reference for small boards, the fast operator above ``dense_below``."""
    if len(arrays) < 1:
        raise ExtractionError("no segments", key="segments")
    if len(arrays) < dense_below:
        return DenseInductance.from_arrays(arrays)
    return FastInductance(arrays)
