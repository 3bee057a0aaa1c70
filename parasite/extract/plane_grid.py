"""The far field of horizontal copper on layer grids by FFT (precorrected FFT).

Method: Phillips & White, "A precorrected-FFT method for electrostatic analysis of
complicated 3-D structures", IEEE Trans. CAD 16(10), 1997 (the particle-mesh idea of
Hockney & Eastwood, "Computer simulation using particles", 1988). Every horizontal
conductor lies in a plane ``z = const`` (its layer, or an image's mirrored layer); each
plane carries a square grid of spacing ``h`` (m), the same in x and y for all planes.

* **Projection.** A conductor's uniform current (length ``l`` along ``u``, width ``w``
  across, both horizontal) is cut into pieces at most ``2 h`` on a side; each piece is
  carried by the 4 x 4 grid nodes around its centre with weights that reproduce its
  moments ``E[x^a y^b]``, ``a, b <= 3`` (the average over 3 x 3 Gauss-Legendre points
  of the piece of the cubic Lagrange weights; exact for an axis-aligned piece). The
  section's spread along z (variance ``s = t^2 / 12`` of the thickness) is carried in
  the plane too: away from its source ``1/r`` is harmonic, so ``d^2/dz^2 = -(d^2/dx^2
  + d^2/dy^2)`` and ``(s/2) d^2/dz^2`` is the term of an in-plane variance ``-s`` in
  both x and y (second order, as :func:`parasite.extract.pairs.far_mutual`'s section
  correction).
* **Convolution.** The grid charges of every plane are convolved with ``1/r`` between
  grid nodes of every pair of planes by zero-padded real FFTs (``scipy.fft``, both
  cores); the same weights interpolate the potentials back (``P^T K P``, symmetric).
* **Precorrection.** The grid is right only for pairs a few spacings apart; for the
  pairs the operator stores exactly (its near field, and every pair of midpoints
  within :data:`NEAR_SPACINGS` spacings), the grid's own value ``P_i^T K P_j`` is
  computed pair by pair (:meth:`PlaneGrid.pair_values`, compiled; for a long
  conductor from one convolution of its own charge) and replaced by the exact entry.

The error of a far pair is that of the moments left out (fourth order in the stencil
over the distance); measured against the dense matrix in docs/scale.md and checked in
tests/extract/test_plane_grid.py. Copper off the grid is left to the multipole sums:
vertical copper (vias) couples to nothing on it (no x or y component), and inclined
copper (probe leads, wires) has its pairs with every segment stored exactly
(:data:`MAX_INCLINED_PAIRS`). SI units: m, H (``1/r`` sums in 1/m).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numba as nb
import numpy as np
import scipy.fft as sfft
import scipy.sparse as sp

from parasite.extract.filaments import MU0_4PI

STENCIL = 4
"""Grid nodes per axis carrying one piece (cubic Lagrange weights)."""
NEAR_SPACINGS = 6.0
"""Pairs whose horizontal midpoint distance is below this many grid spacings are always
stored exactly (the operator's near radii are at least half of it on the grid's copper):
beyond it the stencils of two pieces are at least 4 spacings apart."""
MAX_INCLINED_PAIRS = 4_000_000
"""Inclined copper (probe leads, wires; neither horizontal nor vertical) is not on the
grid: its pairs with every segment are stored exactly, so the grid applies while
``inclined segments x segments`` is at most this (else the multipole sums)."""
MAX_PLANES = 16
"""More distinct heights of horizontal copper than this: no grid (multipole sums)."""
MAX_BYTES = 256 * 2**20
"""Bytes of the grids' kernel spectra (one per height difference) at most: the spacing
is widened until they fit (then more pairs fall within the near distance)."""
CHUNK_BYTES = 128 * 2**20
"""Bytes of the charges' and potentials' spectra per batch of columns in a product."""
LONG_NODES = 64
"""A conductor carried by more grid nodes than this (a trace several spacings long) has
its grid values computed by one convolution of its own charge (a column of the grid's
operator) instead of pair by pair: a pair's cost is the product of the two node
counts, and a long conductor is near every segment within its (long) near radius."""
MAX_LONG_BYTES = 256 * 2**20
"""Bytes of those columns at most (the conductors with the most nodes first)."""
_FLAT = 1e-12
"""A conductor is horizontal when ``|u_z|`` is below this, vertical when ``|u_x|`` and
``|u_y|`` are."""
_Z_ROUND = 1e-9
"""Heights within this (m) are one plane."""

_NODES = np.arange(STENCIL, dtype=float)
_LAGRANGE = np.linalg.inv(np.vander(_NODES, increasing=True).T)
"""Row k: the coefficients (ascending powers) of the cubic Lagrange basis of node k."""
_GX, _GW = np.polynomial.legendre.leggauss(3)
_GX, _GW = 0.5 * _GX, 0.5 * _GW


def _basis(xi: np.ndarray, order: int = 0) -> np.ndarray:
    """The Lagrange basis (or its ``order``-th derivative) at ``xi`` (...,) -> (..., 4)."""
    coef = _LAGRANGE.T  # (power, node)
    for _ in range(order):
        coef = (np.arange(1, coef.shape[0])[:, None] * coef[1:])
    powers = np.stack([xi ** a for a in range(coef.shape[0])], axis=-1)
    return powers @ coef


def classify(u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(horizontal, vertical) masks of conductors with unit directions ``u`` (K, 3)."""
    horizontal = np.abs(u[:, 2]) < _FLAT
    vertical = (np.abs(u[:, 0]) < _FLAT) & (np.abs(u[:, 1]) < _FLAT)
    return horizontal, vertical


@dataclass
class PlaneGrid:
    """The grids and the projection of the horizontal conductors (module docstring).

    ``proj``: CSR (K, nodes) weights of conductor k on the grid nodes (rows of
    non-horizontal conductors empty); nodes numbered ``(plane * nx + ix) * ny + iy``.
    ``table[u]``: ``1/r`` (1/m) between nodes ``(ix, iy)`` apart on two planes whose
    height difference is ``dz[u]`` (0 at zero distance); ``pair_dz[s, t]`` its index."""

    h: float
    origin: np.ndarray  # (2,) m: node (0, 0) of every plane
    nx: int
    ny: int
    planes: np.ndarray  # (nz,) m
    horizontal: np.ndarray  # (K,) bool: on the grid
    inclined: np.ndarray  # (K,) bool: every pair with a segment stored exactly
    proj: sp.csr_matrix
    table: np.ndarray  # (n_dz, nx, ny)
    pair_dz: np.ndarray  # (nz, nz) int64
    shape_fft: tuple[int, int]
    kernel_hat: np.ndarray  # (n_dz, fx, fy // 2 + 1) complex
    long_index: np.ndarray | None = None  # (K,) row of long_values, -1: pair by pair
    long_values: np.ndarray | None = None  # (n_long, K) 1/m: P_i^T K P_j of long i

    @property
    def nz(self) -> int:
        return int(self.planes.size)

    @property
    def near_distance(self) -> float:
        """Below this horizontal midpoint distance (m) a pair is always stored exactly."""
        return NEAR_SPACINGS * self.h

    def potentials(self, charges: np.ndarray) -> np.ndarray:
        """``sum_j P_i^T K P_j q_j`` (1/m times the charges' unit) at every conductor
        from ``charges`` (K, m) on the conductors (rows of non-horizontal ones unused)."""
        m = charges.shape[1]
        fx, fy = self.shape_fft
        per_column = 2 * 16 * self.nz * fx * (fy // 2 + 1)  # charges' and potentials'
        step = max(1, int(CHUNK_BYTES // per_column))
        out = np.empty((self.proj.shape[0], m))
        for c0 in range(0, m, step):
            cols = slice(c0, min(m, c0 + step))
            k = cols.stop - c0
            q = np.asarray(self.proj.T @ charges[:, cols])  # (nodes, k)
            spec = sfft.rfftn(q.reshape(self.nz, self.nx, self.ny, k), s=(fx, fy), axes=(1, 2),
                              workers=-1)
            acc = np.zeros_like(spec)
            for t in range(self.nz):
                for s in range(self.nz):
                    acc[t] += self.kernel_hat[self.pair_dz[t, s]][:, :, None] * spec[s]
            del spec
            pot = sfft.irfftn(acc, s=(fx, fy), axes=(1, 2), workers=-1)[:, :self.nx, :self.ny]
            out[:, cols] = self.proj @ np.ascontiguousarray(pot).reshape(-1, k)
        return out

    def pair_values(self, ii: np.ndarray, jj: np.ndarray) -> np.ndarray:
        """The grid's own ``P_i^T K P_j`` (1/m) for conductor pairs (ii[k], jj[k]): read
        from the long conductors' columns (:data:`LONG_NODES`), else summed pair by pair
        over both conductors' nodes."""
        ii = np.ascontiguousarray(ii, np.int64)
        jj = np.ascontiguousarray(jj, np.int64)
        out = np.empty(ii.size)
        rest = np.ones(ii.size, dtype=bool)
        if self.long_index is not None and self.long_values is not None:
            li, lj = self.long_index[ii], self.long_index[jj]
            a, b = li >= 0, (li < 0) & (lj >= 0)
            out[a] = self.long_values[li[a], jj[a]]
            out[b] = self.long_values[lj[b], ii[b]]
            rest = ~(a | b)
        out[rest] = _pair_values(ii[rest], jj[rest], self.proj.indptr.astype(np.int64),
                                 self.proj.indices.astype(np.int64), self.proj.data, self.nx,
                                 self.ny, self.table, self.pair_dz)
        return out

    def with_long_columns(self) -> PlaneGrid:
        """This grid with the columns of its long conductors (:data:`LONG_NODES`,
        within :data:`MAX_LONG_BYTES`), each one convolution of its own charge."""
        nodes = np.diff(self.proj.indptr)
        k = nodes.size
        long = np.flatnonzero(nodes > LONG_NODES)
        if long.size == 0:
            return self
        long = long[np.argsort(-nodes[long], kind="stable")][:int(MAX_LONG_BYTES // (8 * k))]
        long = np.sort(long)
        values = np.empty((long.size, k))
        step = 64
        for c0 in range(0, long.size, step):
            cols = long[c0:c0 + step]
            unit = np.zeros((k, cols.size))
            unit[cols, np.arange(cols.size)] = 1.0
            values[c0:c0 + cols.size] = self.potentials(unit).T
        index = np.full(k, -1, dtype=np.int64)
        index[long] = np.arange(long.size)
        return dataclasses.replace(self, long_index=index, long_values=values)


@dataclass(frozen=True)
class Layout:
    """Where the grids go: the horizontal conductors, their planes and the spacing."""

    horizontal: np.ndarray  # (K,) bool
    inclined: np.ndarray  # (K,) bool: neither horizontal nor vertical
    plane_of: np.ndarray  # (count of horizontal,) plane index of each
    planes: np.ndarray  # (nz,) m
    h: float  # m
    lo: np.ndarray  # (2,) m: the lower corner of the copper's reach
    span: np.ndarray  # (2,) m


def grid_layout(u: np.ndarray, mid: np.ndarray, length: np.ndarray, width: np.ndarray,
                n_segments: int) -> Layout | None:
    """The layout of the grids of conductors (directions ``u``, midpoints ``mid``,
    lengths and widths, m; the first ``n_segments`` are segments, the rest their
    images), or None when the grid does not apply: no horizontal segment, more
    inclined segments than :data:`MAX_INCLINED_PAIRS` allows, or more than
    :data:`MAX_PLANES` heights.
    The spacing is half the median of the horizontal segments' larger side (length or
    width), widened until the kernels' spectra fit in :data:`MAX_BYTES`."""
    horizontal, vertical = classify(u)
    inclined = ~(horizontal | vertical)
    if (not horizontal[:n_segments].any()
            or int(inclined[:n_segments].sum()) * n_segments > MAX_INCLINED_PAIRS):
        return None
    hz = np.flatnonzero(horizontal)
    z = mid[hz, 2]
    keys, plane_of = np.unique(np.round(z / _Z_ROUND).astype(np.int64), return_inverse=True)
    if keys.size > MAX_PLANES:
        return None
    planes = np.array([z[plane_of == p].mean() for p in range(keys.size)])
    seg = horizontal[:n_segments]
    h = 0.5 * float(np.median(np.maximum(length[:n_segments][seg], width[:n_segments][seg])))
    w_dir = np.stack([-u[hz, 1], u[hz, 0]], axis=1)  # across, in the plane
    reach = 0.5 * (np.abs(u[hz, :2]) * length[hz][:, None]
                   + np.abs(w_dir) * width[hz][:, None])  # extent from the middle, x and y
    lo = (mid[hz, :2] - reach).min(axis=0)
    span = (mid[hz, :2] + reach).max(axis=0) - lo
    dz = np.abs(planes[:, None] - planes[None, :])
    n_dz = np.unique(np.round(dz / _Z_ROUND)).size
    while n_dz * spectrum_bytes(span, h) > MAX_BYTES:
        h *= 1.25
    return Layout(horizontal, inclined, plane_of.astype(np.int64), planes, h, lo, span)


def grid_radii(radius: np.ndarray, xy: np.ndarray, horizontal: np.ndarray,
               inclined: np.ndarray, h: float) -> np.ndarray:
    """The near radii (m) of ``radius.size`` segments (midpoints ``xy``) with a grid of
    spacing ``h``: at least half of :data:`NEAR_SPACINGS` spacings on the grid's
    copper, and past the whole board for inclined copper (every pair stored exactly)."""
    n = radius.size
    out = np.where(horizontal[:n], np.maximum(radius, 0.5 * NEAR_SPACINGS * h), radius)
    if inclined[:n].any():
        reach = float(np.ptp(xy, axis=0).max()) + float(radius.max())
        out = np.where(inclined[:n], 2.0 * reach + 1.0, out)
    return out


def grid_shape(span: np.ndarray, h: float) -> tuple[int, int]:
    """Nodes (x, y) of a grid of spacing ``h`` over ``span`` (m) with its margins (the
    stencils reach 2 spacings past a piece's centre)."""
    nx, ny = (int(math.ceil(s / h)) + 6 for s in span)
    return nx, ny


def spectrum_bytes(span: np.ndarray, h: float) -> float:
    """Bytes of one plane's zero-padded real-FFT spectrum (complex128) of that grid."""
    nx, ny = grid_shape(span, h)
    return 16.0 * (2 * nx) * (ny + 1)


def plane_grid(c: object, n_segments: int) -> PlaneGrid | None:
    """The grid of the conductor table ``c`` (:class:`parasite.extract.pairs._Conductors`,
    ``n_segments`` segments then their images), or None (:func:`grid_layout`)."""
    u = np.asarray(c.u)  # type: ignore[attr-defined]
    all_mid = np.asarray(c.mid)  # type: ignore[attr-defined]
    all_length = np.asarray(c.length)  # type: ignore[attr-defined]
    all_width = np.asarray(c.width)  # type: ignore[attr-defined]
    layout = grid_layout(u, all_mid, all_length, all_width, n_segments)
    if layout is None:
        return None
    horizontal, plane_of, planes, h = layout.horizontal, layout.plane_of, layout.planes, layout.h
    hz = np.flatnonzero(horizontal)
    mid, length, width = all_mid[hz], all_length[hz], all_width[hz]
    x0 = layout.lo - 2.0 * h
    nx, ny = grid_shape(layout.span, h)

    # pieces at most 2 h on a side, their centres and (along, across) sizes
    n_l = np.maximum(1, np.ceil(length / (2.0 * h) - 1e-9)).astype(np.int64)
    n_w = np.maximum(1, np.ceil(width / (2.0 * h) - 1e-9)).astype(np.int64)
    count = n_l * n_w
    owner = np.repeat(np.arange(hz.size), count)
    first = np.repeat(np.cumsum(count) - count, count)
    k = np.arange(owner.size) - first
    il, iw = k // n_w[owner], k % n_w[owner]
    u_h = u[hz][:, :2]
    w_h = np.asarray(c.w_dir)[hz][:, :2]  # type: ignore[attr-defined]
    pl, pw = length[owner] / n_l[owner], width[owner] / n_w[owner]
    centre = (mid[owner, :2]
              + u_h[owner] * ((il + 0.5) * pl - 0.5 * length[owner])[:, None]
              + w_h[owner] * ((iw + 0.5) * pw - 0.5 * width[owner])[:, None])
    base = np.floor((centre - x0) / h).astype(np.int64) - 1  # nodes base .. base + 3
    # Lagrange weights averaged over the piece's 3 x 3 Gauss points
    weights = np.zeros((owner.size, STENCIL, STENCIL))
    for ga, wa in zip(_GX, _GW, strict=True):
        for gb, wb in zip(_GX, _GW, strict=True):
            p = centre + u_h[owner] * (ga * pl)[:, None] + w_h[owner] * (gb * pw)[:, None]
            loc = (p - x0) / h - base
            wx = _basis(loc[:, 0])
            wy = _basis(loc[:, 1])
            weights += (wa * wb) * wx[:, :, None] * wy[:, None, :]
    # the thickness's vertical variance s as in-plane variance -s in x and in y
    thick = np.asarray(c.thickness)[hz][owner]  # type: ignore[attr-defined]
    coef = -(thick ** 2 / 12.0) / (2.0 * h * h)
    loc = (centre - x0) / h - base
    bx, by = _basis(loc[:, 0]), _basis(loc[:, 1])
    bx2, by2 = _basis(loc[:, 0], 2), _basis(loc[:, 1], 2)
    weights += coef[:, None, None] * (bx2[:, :, None] * by[:, None, :]
                                      + bx[:, :, None] * by2[:, None, :])
    weights /= count[owner][:, None, None]
    off = np.arange(STENCIL)
    ix = base[:, 0][:, None, None] + off[:, None]
    iy = base[:, 1][:, None, None] + off[None, :]
    node = (plane_of[owner][:, None, None] * nx + ix) * ny + iy
    rows = np.broadcast_to(hz[owner][:, None, None], node.shape)
    n_cond = u.shape[0]
    proj = sp.csr_matrix((weights.ravel(), (rows.ravel(), node.ravel())),
                         shape=(n_cond, planes.size * nx * ny))
    proj.sum_duplicates()

    # 1/r tables per height difference, and their padded spectra
    dz_all = np.abs(planes[:, None] - planes[None, :])
    dz_key = np.round(dz_all / _Z_ROUND).astype(np.int64)
    dz_keys, pair_dz = np.unique(dz_key, return_inverse=True)
    pair_dz = pair_dz.reshape(dz_all.shape).astype(np.int64)
    dz_vals = np.array([dz_all[pair_dz == q][0] for q in range(dz_keys.size)])
    gx = (np.arange(nx) * h)[:, None]
    gy = (np.arange(ny) * h)[None, :]
    r2 = gx ** 2 + gy ** 2
    table = np.empty((dz_vals.size, nx, ny))
    for q, dz in enumerate(dz_vals):
        rr = np.sqrt(r2 + dz * dz)
        with np.errstate(divide="ignore"):
            table[q] = np.where(rr > 0, 1.0 / np.where(rr > 0, rr, 1.0), 0.0)
    fx, fy = sfft.next_fast_len(2 * nx - 1, real=True), sfft.next_fast_len(2 * ny - 1, real=True)
    kernel_hat = np.empty((dz_vals.size, fx, fy // 2 + 1), dtype=complex)
    for q in range(dz_vals.size):
        full = np.zeros((fx, fy))
        t = table[q]
        full[:nx, :ny] = t
        full[fx - nx + 1:, :ny] = t[:0:-1, :]
        full[:nx, fy - ny + 1:] = t[:, :0:-1]
        full[fx - nx + 1:, fy - ny + 1:] = t[:0:-1, :0:-1]
        kernel_hat[q] = sfft.rfftn(full, workers=-1)
    grid = PlaneGrid(h=h, origin=x0, nx=nx, ny=ny, planes=planes, horizontal=horizontal,
                     inclined=layout.inclined, proj=proj, table=table, pair_dz=pair_dz,
                     shape_fft=(fx, fy), kernel_hat=kernel_hat)
    return grid.with_long_columns()


@nb.njit(cache=True, parallel=True)
def _pair_values(ii: np.ndarray, jj: np.ndarray, indptr: np.ndarray, indices: np.ndarray,
                 data: np.ndarray, nx: int, ny: int, table: np.ndarray,
                 pair_dz: np.ndarray) -> np.ndarray:
    """``sum_a sum_b w_a w_b K(node_a, node_b)`` over the projections of ii[k], jj[k]."""
    out = np.zeros(ii.size)
    plane_size = nx * ny
    for k in nb.prange(ii.size):
        i, j = ii[k], jj[k]
        acc = 0.0
        for a in range(indptr[i], indptr[i + 1]):
            na = indices[a]
            pa = na // plane_size
            ra = na - pa * plane_size
            xa, ya = ra // ny, ra % ny
            for b in range(indptr[j], indptr[j + 1]):
                nb_ = indices[b]
                pb = nb_ // plane_size
                rb = nb_ - pb * plane_size
                xb, yb = rb // ny, rb % ny
                acc += data[a] * data[b] * table[pair_dz[pa, pb], abs(xa - xb), abs(ya - yb)]
        out[k] = acc
    return out


def grid_entries(grid: PlaneGrid, ii: np.ndarray, jj: np.ndarray, img: np.ndarray,
                 d: np.ndarray, image_sign: float) -> np.ndarray:
    """What the grid's far field gives for entry (ii[k], jj[k]) of horizontal segments
    (H): ``mu0/4pi (d_i . d_j) G_ij`` with the images symmetrised as in
    :func:`parasite.extract.kernels.point_entries` (``G`` of :meth:`PlaneGrid.pair_values`)."""
    ii = np.asarray(ii, np.int64)
    jj = np.asarray(jj, np.int64)
    out = np.einsum("kc,kc->k", d[ii], d[jj]) * grid.pair_values(ii, jj)
    for a, b in ((ii, img[jj]), (img[ii], jj)):  # M(i, j') and M(i', j)
        sel = (a >= 0) & (b >= 0)
        if sel.any():
            aa, bb = a[sel], b[sel]
            out[sel] += (image_sign * 0.5 * np.einsum("kc,kc->k", d[aa], d[bb])
                         * grid.pair_values(aa, bb))
    return MU0_4PI * out


def grid_product(grid: PlaneGrid, x: np.ndarray, img: np.ndarray, d: np.ndarray,
                 image_sign: float) -> np.ndarray:
    """The grid's far field for every entry of the horizontal segments, ``sum_j F_ij
    x_j`` (V s for x in A; (n, m)): the x and y components of the currents convolved
    separately (the term of a pair is ``d_i . d_j``), images symmetrised as in
    :func:`grid_entries`. Rows of other segments are 0."""
    n, m = x.shape
    k = d.shape[0]
    has = img >= 0
    seg_h = grid.horizontal[:n]
    out = np.zeros((n, m))
    for comp in (0, 1):
        dc = np.where(grid.horizontal, d[:, comp], 0.0)
        if not np.any(dc):
            continue
        q = np.zeros((k, m))
        q[:n] = dc[:n, None] * x
        pot = grid.potentials(q)
        out += dc[:n, None] * pot[:n]
        if has.any():
            b_pot = np.zeros((n, m))
            b_pot[has] = dc[img[has], None] * pot[img[has]]  # segments' charges at images
            q = np.zeros((k, m))
            q[img[has]] = dc[img[has], None] * x[has]  # each image carries its segment's
            a_pot = dc[:n, None] * grid.potentials(q)[:n]
            out += image_sign * 0.5 * (a_pot + b_pot)
    out[~seg_h] = 0.0
    return MU0_4PI * out
