"""Magnetic flux density of straight segment currents by the Biot-Savart law.

Filament (a line current ``I`` from ``A`` to ``B``), field at ``P``, with
``a = P - A``, ``b = P - B``, ``dl = B - A``, ``ra = |a|``, ``rb = |b|``:

    B(P) = mu0 I / (4 pi) * (ra + rb) / (ra rb (ra rb + a.b)) * (dl x a)

(the Biot-Savart integral of a straight finite filament in closed form: J. D.
Hanson and S. P. Hirshman, "Compact expressions for the Biot-Savart fields of
a filamentary segment", Physics of Plasmas 9(10), 4410-4412, 2002; the same
field as the textbook form mu0 I / (4 pi s) (sin(theta2) - sin(theta1)),
D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., 2013, ex. 5.5).
It is evaluated as ``(ra + rb)(ra rb - a.b) / (ra rb |dl x a|^2)``, the same
number without the cancellation of ``ra rb + a.b`` near the segment; on the
filament's own line the field is set to 0.

Conductors with a section (SI units: m, A, T):

* bars (``trace``): uniform current over width x thickness, the field averaged
  over the section by Gauss-Legendre filaments across the width (in the board
  plane, perpendicular to the segment) and the thickness. The order comes from
  the least distance ``d`` between the segment and the points: the integrand
  across a width ``w`` is analytic within the Bernstein ellipse through the
  poles at ``+-i d``, so ``n`` points leave an error of about ``rho^(-2 n)``
  with ``rho = a + sqrt(a^2 + 1)``, ``a = 2 d / w`` (L. N. Trefethen,
  *Approximation Theory and Approximation Practice*, SIAM, 2013, ch. 19),
  ``n`` chosen for :data:`SECTION_TOLERANCE`.
* round conductors (vias, probe leads): the centre filament (exact outside an
  infinitely long round conductor by Ampere's law; for a finite one the
  difference is of order (radius / distance)^2).

Return planes (ideal conductors, as in the extraction, see
:mod:`parasite.extract.images`): for a point on the segment's side of its plane
face the field is that of the segment plus its image (mirrored geometry,
current factor -1); a point on the far side of the face is shielded and gets
nothing from that segment.

The sum over (points x filaments) runs in the compiled kernel of
:mod:`parasite.field.kernel_jit` (numba, no temporaries) or, without numba, in
numpy blocks of at most :data:`BLOCK_PAIRS` pairs; either way the memory stays
bounded whatever the sizes, and there is no Python loop per point or per pair.
"""

from __future__ import annotations

import math

import numpy as np

from geometry.model import SegmentArrays
from parasite.extract.filaments import MU0_4PI, gauss_legendre
from parasite.extract.images import IMAGE_SIGN

BLOCK_PAIRS = 250_000
"""(point, filament) pairs per vectorised block (a few MB per temporary array)."""

SECTION_TOLERANCE = 1e-4
"""Relative error aimed at by the quadrature over a bar's section."""

POINT_BLOCK = 64
"""Fewest points per block with the compiled kernel (the section orders are chosen
per block; small boards take larger blocks, up to BLOCK_PAIRS / segments points)."""

MAX_SECTION_ORDER = 24
"""Most Gauss-Legendre filaments across a bar's width (or thickness)."""


def filament_kernel(points: np.ndarray, start: np.ndarray, end: np.ndarray
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Field (T per A) at ``points`` (P, 3) of unit currents on the filaments
    ``start`` -> ``end`` (F, 3), m: components (P, F) each (see the module
    docstring for the formula and its source)."""
    ax = points[:, 0:1] - start[None, :, 0]
    ay = points[:, 1:2] - start[None, :, 1]
    az = points[:, 2:3] - start[None, :, 2]
    d = end - start
    dx, dy, dz = d[None, :, 0], d[None, :, 1], d[None, :, 2]
    ra2 = ax * ax + ay * ay + az * az
    adl = ax * dx + ay * dy + az * dz
    rb2 = ra2 - 2.0 * adl + (dx * dx + dy * dy + dz * dz)
    ra = np.sqrt(ra2)
    rb = np.sqrt(np.maximum(rb2, 0.0))
    rab = ra * rb
    cx = dy * az - dz * ay
    cy = dz * ax - dx * az
    cz = dx * ay - dy * ax
    c2 = cx * cx + cy * cy + cz * cz
    # c2 is 0 on the filament's line; compare it with the scale of the pair
    on_line = c2 <= 1e-24 * (rab * rab + 1e-300)
    denom = np.where(on_line, 1.0, rab * c2)
    f = np.where(on_line, 0.0, MU0_4PI * (ra + rb) * (rab - (ra2 - adl)) / denom)
    return f * cx, f * cy, f * cz


def section_orders(width: np.ndarray, distance: np.ndarray,
                   tolerance: float = SECTION_TOLERANCE) -> np.ndarray:
    """Gauss-Legendre order (>= 1) across a section ``width`` (m) for points at
    least ``distance`` (m) away: the smallest ``n`` with ``rho^(-2 n) <=
    tolerance``, ``rho = a + sqrt(a^2 + 1)``, ``a = 2 distance / width`` (module
    docstring), at most :data:`MAX_SECTION_ORDER`."""
    width = np.asarray(width, dtype=float)
    a = 2.0 * np.asarray(distance, dtype=float) / np.maximum(width, 1e-300)
    rho = a + np.sqrt(a * a + 1.0)
    with np.errstate(divide="ignore"):
        n = np.ceil(math.log(1.0 / tolerance) / (2.0 * np.log(rho)))
    n = np.where(np.isfinite(n), n, MAX_SECTION_ORDER)
    return np.clip(n, 1, MAX_SECTION_ORDER).astype(np.int64)


def _box_distance(lo_a: np.ndarray, hi_a: np.ndarray, lo_b: np.ndarray, hi_b: np.ndarray) -> np.ndarray:
    """Least distance (m) between boxes ``[lo_a, hi_a]`` (S, 3) and one box ``[lo_b, hi_b]`` (3,)."""
    gap = np.maximum(0.0, np.maximum(lo_b[None] - hi_a, lo_a - hi_b[None]))
    return np.sqrt(np.sum(gap * gap, axis=1))


def _width_axes(arrays: SegmentArrays) -> tuple[np.ndarray, np.ndarray]:
    """Unit vectors across each segment's width (in the board plane) and
    thickness (vertical) (S, 3); for a segment along z the width lies along x."""
    d = arrays.end - arrays.start
    w = np.column_stack([-d[:, 1], d[:, 0], np.zeros(len(d))])
    norm = np.linalg.norm(w, axis=1)
    vertical = norm <= 1e-12 * np.maximum(np.linalg.norm(d, axis=1), 1e-300)
    w[vertical] = (1.0, 0.0, 0.0)
    w /= np.where(vertical, 1.0, norm)[:, None]
    t = np.zeros_like(w)
    t[:, 2] = 1.0
    return w, t


def _filaments(arrays: SegmentArrays, seg: np.ndarray, nw: int, nt: int,
               axes: tuple[np.ndarray, np.ndarray]
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Filaments of the segments ``seg`` (all of one order pair): starts, ends
    (F, 3), weights (F,) and the segment index of each (F,)."""
    xw, ww = gauss_legendre(nw)
    xt, wt = gauss_legendre(nt)
    # Gauss-Legendre on [-1, 1] -> offsets of +-half the size, weights summing to 1
    ow = 0.5 * xw[:, None] * np.ones_like(xt)[None, :]
    ot = 0.5 * np.ones_like(xw)[:, None] * xt[None, :]
    wk = (0.5 * ww)[:, None] * (0.5 * wt)[None, :]
    ow, ot, wk = ow.ravel(), ot.ravel(), wk.ravel()
    k = len(wk)
    width = np.where(arrays.round[seg], 0.0, arrays.width[seg])
    thick = np.where(arrays.round[seg], 0.0, arrays.thickness[seg])
    off = (ow[None, :, None] * width[:, None, None] * axes[0][seg][:, None, :]
           + ot[None, :, None] * thick[:, None, None] * axes[1][seg][:, None, :])  # (s, k, 3)
    starts = (arrays.start[seg][:, None, :] + off).reshape(-1, 3)
    ends = (arrays.end[seg][:, None, :] + off).reshape(-1, 3)
    weights = np.tile(wk, len(seg))
    owner = np.repeat(seg, k)
    return starts, ends, weights, owner


def segment_field(points: np.ndarray, arrays: SegmentArrays, currents: np.ndarray, *,
                  images: bool = True, tolerance: float = SECTION_TOLERANCE,
                  compiled: bool | None = None) -> np.ndarray:
    """Magnetic flux density (T) at ``points`` (P, 3) m of the segment currents
    ``currents`` (S,) A (real, or complex phasors) flowing ``start`` -> ``end``.

    Returns (P, 3), complex when the currents are. ``images``: include the
    return planes' images and shielding (``arrays.mirror_z``; module docstring).
    Segments that carry no current are skipped. ``compiled``: use the numba
    kernel (:mod:`parasite.field.kernel_jit`; default: when numba is installed)
    or plain numpy blocks (False); both evaluate the same formula.
    """
    from parasite.field import kernel_jit

    points = np.atleast_2d(np.asarray(points, dtype=float))
    currents = np.asarray(currents)
    complex_out = np.iscomplexobj(currents)
    out = np.zeros((len(points), 3), dtype=complex)
    live = np.flatnonzero(currents != 0)
    if compiled is None:
        compiled = kernel_jit.available()
    if len(live) and len(points):
        axes = _width_axes(arrays)
        half = 0.5 * np.maximum(arrays.width, arrays.thickness)[:, None]
        seg_lo = np.minimum(arrays.start, arrays.end)[live] - half[live]
        seg_hi = np.maximum(arrays.start, arrays.end)[live] + half[live]
        mirror = arrays.mirror_z if images else np.full(len(arrays), np.nan)
        zmid = 0.5 * (arrays.start[:, 2] + arrays.end[:, 2])
        # Small blocks of points keep the section orders adaptive (far segments get one
        # filament); without numba the block also bounds the (points x filaments) arrays.
        step = (max(POINT_BLOCK, BLOCK_PAIRS // len(live)) if compiled
                else max(1, BLOCK_PAIRS // max(1, 4 * len(live))))
        for p0 in range(0, len(points), step):
            pts = points[p0:p0 + step]
            dist = _box_distance(seg_lo, seg_hi, pts.min(axis=0), pts.max(axis=0))
            nw = np.where(arrays.round[live], 1, section_orders(arrays.width[live], dist, tolerance))
            nt = np.where(arrays.round[live], 1,
                          section_orders(arrays.thickness[live], dist, tolerance))
            parts = [_filaments(arrays, live[(nw == a) & (nt == b)], a, b, axes)
                     for a, b in sorted(set(zip(nw.tolist(), nt.tolist(), strict=True)))]
            s = np.vstack([q[0] for q in parts])
            e = np.vstack([q[1] for q in parts])
            owner = np.concatenate([q[3] for q in parts])
            w = np.concatenate([q[2] for q in parts]) * currents[owner]
            if compiled:
                out[p0:p0 + step] = kernel_jit.field_sum(pts, s, e, w, mirror[owner], zmid[owner])
            else:
                out[p0:p0 + step] = _accumulate(pts, s, e, w, mirror[owner], zmid[owner])
    return out if complex_out else out.real.copy()


def _accumulate(pts: np.ndarray, s: np.ndarray, e: np.ndarray, weight: np.ndarray,
                zm: np.ndarray, zs: np.ndarray) -> np.ndarray:
    """Sum over filaments (in chunks) of weight x field (P, 3), with the images in
    the planes at ``zm`` (per filament, NaN: none) and the shielding of the far side
    (``zs``: the height of the filament's segment)."""
    out = np.zeros((len(pts), 3), dtype=complex)
    chunk = max(1, BLOCK_PAIRS // max(1, len(pts)))
    for f0 in range(0, len(s), chunk):
        sl = slice(f0, f0 + chunk)
        kx, ky, kz = filament_kernel(pts, s[sl], e[sl])
        plane = np.isfinite(zm[sl])
        if np.any(plane):
            z = zm[sl][plane]
            si, ei = s[sl][plane].copy(), e[sl][plane].copy()
            si[:, 2] = 2.0 * z - si[:, 2]
            ei[:, 2] = 2.0 * z - ei[:, 2]
            ix, iy, iz = filament_kernel(pts, si, ei)
            same = (pts[:, 2:3] - z[None, :]) * (zs[sl][plane] - z)[None, :] > 0
            kx[:, plane] = (kx[:, plane] + IMAGE_SIGN * ix) * same
            ky[:, plane] = (ky[:, plane] + IMAGE_SIGN * iy) * same
            kz[:, plane] = (kz[:, plane] + IMAGE_SIGN * iz) * same
        w = weight[sl]
        out[:, 0] += kx @ w
        out[:, 1] += ky @ w
        out[:, 2] += kz @ w
    return out
