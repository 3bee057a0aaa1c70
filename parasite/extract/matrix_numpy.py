"""The numpy reference assembly of the inductance matrix: the pairs in dense blocks
of rows x columns, far pairs by 2-point line quadrature from small matrix products,
the rest through :func:`parasite.extract.pairs._mutual`; blocks on threads.

This was the production path before the compiled loops of
:mod:`parasite.extract.kernels`; it stays as the independent arrangement of the same
formulas that the compiled path is tested against (tests/extract/test_kernels.py)
and as a baseline in benchmarks/bench_extract.py. Same conventions as
:func:`parasite.extract.matrix.inductance_matrix` (H, images symmetrised).
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np

from geometry.model import SegmentArrays
from parasite.extract.filaments import MU0_4PI
from parasite.extract.images import IMAGE_SIGN
from parasite.extract.matrix import _mirror_upper, _setup, _workers
from parasite.extract.pairs import (
    BLOCK_PAIRS,
    FAR_RULES,
    PERPENDICULAR_COS,
    PLAIN_SECTION_RATIO,
    _Conductors,
    _mutual,
)


def inductance_matrix_numpy(arrays: SegmentArrays) -> np.ndarray:
    """Dense partial inductance matrix (N, N) in H by numpy blocks (module docstring)."""
    L, cond, img_index, mz = _setup(arrays)
    n = L.shape[0]
    step = max(1, BLOCK_PAIRS // max(n, 1))

    def work(r0: int) -> None:
        rows = np.arange(r0, min(n - 1, r0 + step))
        vals = _block_values(cond, rows, np.arange(r0 + 1, n), img_index, mz)
        for k, i in enumerate(rows.tolist()):  # one Python step per row, not per pair
            L[i, i + 1:] = vals[k, i - r0:]

    with ThreadPoolExecutor(max_workers=_workers()) as pool:
        list(pool.map(work, range(0, n - 1, step)))
    _mirror_upper(L)
    return L


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
