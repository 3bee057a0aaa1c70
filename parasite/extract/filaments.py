"""Mutual inductance of straight filaments (Neumann's formula), vectorised.

Neumann's formula for two thin straight filaments a and b (lengths in m)::

    M = mu0/(4 pi) * (u_a . u_b) * Int_a Int_b ds dt / |r_a(s) - r_b(t)|      (H)

with u the unit direction vectors. Sign convention: positive current flows from
a segment's start to its end, so antiparallel filaments have M < 0 and
perpendicular ones M = 0 exactly.

Closed forms used here:

* parallel filaments at distance rho with axial offsets (Grover, *Inductance
  Calculations*, 1946, parallel filaments, in the corner-sum form; Ruehli, "Inductance
  calculations in a complex integrated circuit environment", IBM J. Res. Dev.
  16(5), 1972): ``Int Int = sum_i s_i g(x_i, rho)`` with
  ``g(x, rho) = x asinh(x/rho) - sqrt(x^2 + rho^2)``;
* filaments at any angle (coplanar or skew): the double antiderivative of 1/R
  in coordinates measured from the feet of the common perpendicular (Grover
  1946, "filaments inclined to one another", for coplanar filaments; the same
  double antiderivative with the common perpendicular's length d for skew
  lines, derived here); checked against scipy quadrature
  in the tests.

Everything is in SI units: lengths in m, inductance in H.
"""

from __future__ import annotations

import functools

import numpy as np

MU0_4PI = 1e-7
"""mu0/(4 pi) in H/m (the classical value mu0 = 4 pi 1e-7 H/m; the 2019 SI value
differs by 5.5e-10 relative, far below the accuracy of any formula here)."""

# Signs of the four corner terms of a double integral over [a0, a1] x [b0, b1]
# of a function of (b - a): +G(b1-a0) - G(b1-a1) - G(b0-a0) + G(b0-a1).
CORNER_SIGNS = np.array([1.0, -1.0, -1.0, 1.0])


def corner_differences(a0: np.ndarray, a1: np.ndarray, b0: np.ndarray,
                       b1: np.ndarray) -> np.ndarray:
    """The four differences (b - a) of the corner sum, stacked on a last axis of size 4
    in the order of :data:`CORNER_SIGNS`."""
    return np.stack([b1 - a0, b1 - a1, b0 - a0, b0 - a1], axis=-1)


def g_parallel(x: np.ndarray, rho: np.ndarray) -> np.ndarray:
    """Double antiderivative in x of 1/sqrt(x^2 + rho^2), shifted by the constant rho.

    ``g(x, rho) = x asinh(x/rho) - x^2 / (sqrt(x^2+rho^2) + rho)``, which equals
    ``x asinh(x/rho) - sqrt(x^2 + rho^2) + rho``: the constant ``+rho`` cancels in
    any corner sum (the signs add up to zero) and this form does not lose digits
    when |x| << rho. For rho = 0 it is continued as ``|x| ln|x|`` plus terms that
    cancel in a corner sum of filaments that do not overlap (m).
    """
    x = np.asarray(x, dtype=float)
    rho = np.asarray(rho, dtype=float)
    ax = np.abs(x)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.hypot(x, rho)
        val = x * np.arcsinh(x / rho) - x * x / (r + rho)
        collinear = ax * np.log(ax)
    val = np.where(rho > 0, val, np.where(ax > 0, collinear, 0.0))
    return val


def parallel_filament_integral(a0: np.ndarray, a1: np.ndarray, b0: np.ndarray, b1: np.ndarray,
                               rho: np.ndarray) -> np.ndarray:
    """``Int_{a0}^{a1} Int_{b0}^{b1} ds dt / sqrt((t-s)^2 + rho^2)`` (m), parallel filaments
    along a common axis, distance rho apart (Grover 1946, parallel filaments; Ruehli 1972)."""
    x = corner_differences(a0, a1, b0, b1)
    return np.sum(CORNER_SIGNS * g_parallel(x, np.asarray(rho, dtype=float)[..., None]), axis=-1)


def _skew_antiderivative(s: np.ndarray, t: np.ndarray, c: np.ndarray, sn: np.ndarray,
                         d: np.ndarray) -> np.ndarray:
    """F(s, t) with d2F/(ds dt) = 1/R, R^2 = s^2 + t^2 - 2 s t c + d^2.

    s, t are measured from the feet of the common perpendicular of the two lines,
    c = cos(theta), sn = sin(theta) > 0, d = distance between the lines (m).
    ``F = s asinh((t - c s)/sqrt(s^2 sn^2 + d^2)) + t asinh((s - c t)/sqrt(t^2 sn^2 + d^2))
    - (d/sn) atan((d^2 c + s t sn^2)/(d sn R))``; each asinh term is 0 where its
    prefactor is 0 (its limit).
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.sqrt(np.maximum(s * s + t * t - 2.0 * s * t * c + d * d, 0.0))
        a_s = np.sqrt(s * s * sn * sn + d * d)
        a_t = np.sqrt(t * t * sn * sn + d * d)
        term_s = np.where(s != 0.0, s * np.arcsinh((t - c * s) / a_s), 0.0)
        term_t = np.where(t != 0.0, t * np.arcsinh((s - c * t) / a_t), 0.0)
        term_d = np.where(d > 0.0,
                          (d / sn) * np.arctan((d * d * c + s * t * sn * sn) / (d * sn * r)), 0.0)
    return term_s + term_t - term_d


def filament_mutual(pa: np.ndarray, qa: np.ndarray, pb: np.ndarray, qb: np.ndarray,
                    *, parallel_sin: float = 1e-9) -> np.ndarray:
    """Mutual inductance (H) of straight filaments pa->qa and pb->qb at any angle.

    Arrays of shape (..., 3) in m, broadcast together. Perpendicular filaments
    give exactly 0; filaments with sin(theta) < ``parallel_sin`` use the parallel
    closed form. Neumann's formula in closed form: Grover 1946 (coplanar inclined
    filaments) and its extension to skew lines (module docstring).
    """
    pa, qa, pb, qb = (np.asarray(v, dtype=float) for v in (pa, qa, pb, qb))
    da, db = qa - pa, qb - pb
    la = np.linalg.norm(da, axis=-1)
    lb = np.linalg.norm(db, axis=-1)
    ua = da / la[..., None]
    ub = db / lb[..., None]
    c = np.clip(np.sum(ua * ub, axis=-1), -1.0, 1.0)
    cross = np.cross(ua, ub)
    sn = np.linalg.norm(cross, axis=-1)
    w0 = pa - pb
    wu = np.sum(w0 * ua, axis=-1)
    wv = np.sum(w0 * ub, axis=-1)
    par = sn < parallel_sin
    out = np.zeros(np.broadcast_shapes(c.shape, la.shape))

    # parallel (or antiparallel): coordinates along ua
    if np.any(par):
        sgn = np.where(c >= 0, 1.0, -1.0)
        b0 = -wu  # projection of pb on a's axis, relative to pa
        b1 = b0 + sgn * lb
        lo, hi = np.minimum(b0, b1), np.maximum(b0, b1)
        perp = w0 - wu[..., None] * ua
        rho = np.linalg.norm(perp, axis=-1)
        val = sgn * parallel_filament_integral(np.zeros_like(la), la, lo, hi, rho)
        out = np.where(par, val, out)
    gen = ~par & (np.abs(c) > 0.0)
    if np.any(gen):
        sn_safe = np.where(gen, sn, 1.0)
        one_c2 = sn_safe * sn_safe
        s0 = (-wu + c * wv) / one_c2  # foot of the common perpendicular on a, from pa
        t0 = (wv - c * wu) / one_c2  # ... on b, from pb
        # distance between the lines: |w0 . n| with n = ua x ub / sn
        d = np.abs(np.sum(w0 * cross, axis=-1)) / sn_safe
        sa0, sa1 = -s0, la - s0
        tb0, tb1 = -t0, lb - t0
        f = (_skew_antiderivative(sa1, tb1, c, sn_safe, d)
             - _skew_antiderivative(sa1, tb0, c, sn_safe, d)
             - _skew_antiderivative(sa0, tb1, c, sn_safe, d)
             + _skew_antiderivative(sa0, tb0, c, sn_safe, d))
        out = np.where(gen, c * f, out)
    return MU0_4PI * out


@functools.lru_cache(maxsize=64)
def gauss_legendre(order: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on [-1, 1] (cached; read-only arrays)."""
    x, w = np.polynomial.legendre.leggauss(order)
    x.setflags(write=False)
    w.setflags(write=False)
    return x, w


def gauss_legendre_mutual(pa: np.ndarray, qa: np.ndarray, pb: np.ndarray, qb: np.ndarray,
                          order: int) -> np.ndarray:
    """Neumann's formula by ``order``-point Gauss-Legendre quadrature on both filaments (H).

    For filaments far apart compared with their lengths the error falls like
    (l/(2 D))^(2 order); shapes (..., 3) in m.
    """
    x, w = gauss_legendre(order)
    x = 0.5 * (x + 1.0)
    w = 0.5 * w
    pa, qa, pb, qb = (np.asarray(v, dtype=float) for v in (pa, qa, pb, qb))
    da, db = qa - pa, qb - pb
    ra = pa[..., None, :] + x[:, None] * da[..., None, :]  # (..., n, 3)
    rb = pb[..., None, :] + x[:, None] * db[..., None, :]
    diff = ra[..., :, None, :] - rb[..., None, :, :]
    inv = 1.0 / np.linalg.norm(diff, axis=-1)
    integ = np.einsum("i,j,...ij->...", w, w, inv)
    return MU0_4PI * np.sum(da * db, axis=-1) * integ
