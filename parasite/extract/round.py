"""Partial inductance of round conductors (via barrels, probe leads), vectorised.

A round conductor is a solid cylinder (inner radius 0) or a tube (a plated via
barrel) of outer radius r_o and inner radius r_i, with uniform current over its
annular section. Lengths in m, inductance in H.

Coaxial conductors (a conductor with itself, the pieces of one via stack, a via
and its own image in a return plane) are computed exactly to quadrature
precision: the mean of the parallel-filament formula over the distance rho
between a point of one section and a point of the other,

    M = mu0/(4 pi) / (A1 A2) Int_0^(r_o1 + r_o2) G(rho) K(rho) 2 pi rho d rho,

with G the filament double integral (:func:`parasite.extract.filaments.parallel_filament_integral`)
and K(rho) the area where section 1 overlaps section 2 shifted by rho (the
cross-covariogram of two concentric annuli, from the lens area of two circles;
Santalo, *Integral Geometry and Geometric Probability*, 1976). The long-wire
limit is Rosa's formula (Rosa, "The self and mutual inductances of linear
conductors", Bull. Bureau of Standards 4, 1908): L = mu0 l/(2 pi) (ln(2l/r) - 3/4)
for a solid wire.

Parallel conductors that are not coaxial use the centre filaments with the
second-moment correction (:func:`parasite.extract.bars.parallel_filaments_corrected`);
for round sections the variance of the difference of two points along any axis is
(r_o1^2 + r_i1^2 + r_o2^2 + r_i2^2)/4.
"""

from __future__ import annotations

import numpy as np

from parasite.extract.filaments import MU0_4PI, gauss_legendre, parallel_filament_integral

_NODES = 24  # Gauss-Legendre points per piece between kinks of the covariogram


def lens_area(a: np.ndarray, b: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Area (m^2) common to two discs of radii a, b whose centres are d apart."""
    a, b, d = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (a, b, d)))
    small = np.minimum(a, b)
    inside = d <= np.abs(a - b)
    outside = d >= a + b
    with np.errstate(divide="ignore", invalid="ignore"):
        ca = np.clip((d * d + a * a - b * b) / (2 * d * a), -1.0, 1.0)
        cb = np.clip((d * d + b * b - a * a) / (2 * d * b), -1.0, 1.0)
        k = (-d + a + b) * (d + a - b) * (d - a + b) * (d + a + b)
        lens = a * a * np.arccos(ca) + b * b * np.arccos(cb) - 0.5 * np.sqrt(np.maximum(k, 0.0))
    out = np.where(inside, np.pi * small * small, np.where(outside, 0.0, lens))
    return np.where((a > 0) & (b > 0), out, 0.0)


def annulus_overlap(ro1: np.ndarray, ri1: np.ndarray, ro2: np.ndarray, ri2: np.ndarray,
                    d: np.ndarray) -> np.ndarray:
    """Area (m^2) common to two annuli whose centres are d apart (inclusion-exclusion
    of four lens areas)."""
    return (lens_area(ro1, ro2, d) - lens_area(ro1, ri2, d) - lens_area(ri1, ro2, d)
            + lens_area(ri1, ri2, d))


def coaxial_round_mutual(a0: np.ndarray, a1: np.ndarray, b0: np.ndarray, b1: np.ndarray,
                         ro1: np.ndarray, ri1: np.ndarray, ro2: np.ndarray,
                         ri2: np.ndarray) -> np.ndarray:
    """Mutual inductance (H) of two coaxial round conductors spanning [a0, a1] and
    [b0, b1] along their common axis (both currents in +axis direction); the
    covariogram integral of the module docstring, Gauss-Legendre on each piece
    between the kinks of K (the pieces may overlap along the axis)."""
    arrs = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                 (a0, a1, b0, b1, ro1, ri1, ro2, ri2)))
    a0, a1, b0, b1, ro1, ri1, ro2, ri2 = (np.atleast_1d(v) for v in arrs)
    top = ro1 + ro2
    kinks = np.stack([np.abs(ro1 - ro2), np.abs(ro1 - ri2), np.abs(ri1 - ro2),
                      np.abs(ri1 - ri2), ro1 + ri2, ri1 + ro2, ri1 + ri2], axis=-1)
    edges = np.sort(np.concatenate([np.zeros_like(top)[:, None], np.minimum(kinks, top[:, None]),
                                    top[:, None]], axis=-1), axis=-1)  # (n, 9)
    lo, hi = edges[:, :-1], edges[:, 1:]  # (n, 8) pieces, some empty
    x, w = gauss_legendre(_NODES)
    # rho = lo + (hi - lo) (3 s^2 - 2 s^3), s in [0, 1], clusters nodes at both ends of
    # each piece, where rho ln(rho) (first piece) and the kinks of K sit
    s = 0.5 * (x + 1.0)
    ws = 0.5 * w * 6.0 * s * (1.0 - s)
    span = (hi - lo)[..., None]
    rho = lo[..., None] + span * s * s * (3.0 - 2.0 * s)  # (n, 8, q)
    weight = span * ws
    area1 = np.pi * (ro1 * ro1 - ri1 * ri1)
    area2 = np.pi * (ro2 * ro2 - ri2 * ri2)
    kern = annulus_overlap(ro1[:, None, None], ri1[:, None, None], ro2[:, None, None],
                           ri2[:, None, None], rho)
    g = parallel_filament_integral(a0[:, None, None], a1[:, None, None], b0[:, None, None],
                                   b1[:, None, None], np.maximum(rho, 1e-300))
    integral = np.sum(weight * g * kern * 2 * np.pi * rho, axis=(1, 2))
    return MU0_4PI * integral / (area1 * area2)


def round_self_inductance(length: np.ndarray, radius: np.ndarray,
                          inner_radius: np.ndarray) -> np.ndarray:
    """Partial self inductance (H) of a straight round conductor (solid or tube) with
    uniform current over its section, exact to quadrature precision (module docstring)."""
    length = np.asarray(length, dtype=float)
    zero = np.zeros_like(length)
    return coaxial_round_mutual(zero, length, zero, length, radius, inner_radius, radius,
                                inner_radius)


def round_difference_m4(ro1: np.ndarray, ri1: np.ndarray, ro2: np.ndarray,
                        ri2: np.ndarray) -> np.ndarray:
    """E|u|^4 (m^4) for u the difference of independent uniform points of two annuli:
    E|u1|^4 + E|u2|^4 + 4 E|u1|^2 E|u2|^2, with E|u|^2 = (r_o^2 + r_i^2)/2 and
    E|u|^4 = (r_o^4 + r_o^2 r_i^2 + r_i^4)/3 for one annulus."""
    def e2(ro: np.ndarray, ri: np.ndarray) -> np.ndarray:
        return (ro * ro + ri * ri) / 2

    def e4(ro: np.ndarray, ri: np.ndarray) -> np.ndarray:
        return (ro**4 + ro * ro * ri * ri + ri**4) / 3

    return e4(ro1, ri1) + e4(ro2, ri2) + 4 * e2(ro1, ri1) * e2(ro2, ri2)


def round_section_variance(radius: np.ndarray, inner_radius: np.ndarray) -> np.ndarray:
    """Variance (m^2) along any axis of a point uniform on an annulus: (r_o^2 + r_i^2)/4."""
    return (np.asarray(radius) ** 2 + np.asarray(inner_radius) ** 2) / 4


def parallel_bar_round(a0: np.ndarray, a1: np.ndarray, b0: np.ndarray, b1: np.ndarray,
                       dy: np.ndarray, dz: np.ndarray, width: np.ndarray, thickness: np.ndarray,
                       ro: np.ndarray, ri: np.ndarray, n_w: int = 8, n_t: int = 2, n_r: int = 4,
                       n_phi: int = 12) -> np.ndarray:
    """Mutual inductance (H) of a bar (span [a0, a1], section width x thickness centred at
    the origin of the section plane) and a parallel round conductor (span [b0, b1],
    radii ro, ri, axis at (dy, dz)) that are close: the parallel-filament formula
    averaged over both sections, Gauss-Legendre across the bar (n_w x n_t) and over the
    radius (n_r, weight r), the trapezoidal rule around the circle (n_phi; spectrally
    accurate for a periodic integrand). 1-D arrays, one entry per pair."""
    arrs = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in
                                 (a0, a1, b0, b1, dy, dz, width, thickness, ro, ri)))
    a0, a1, b0, b1, dy, dz, width, thickness, ro, ri = (np.atleast_1d(v) for v in arrs)
    xw, ww = gauss_legendre(n_w)
    xt, wt = gauss_legendre(n_t)
    xr, wr = gauss_legendre(n_r)
    ys = 0.5 * xw[None, :, None] * width[:, None, None]  # (n, n_w, 1)
    zs = 0.5 * xt[None, None, :] * thickness[:, None, None]  # (n, 1, n_t)
    wbar = (0.25 * ww[:, None] * wt[None, :]).reshape(-1)  # sums to 1
    r = ri[:, None] + (ro - ri)[:, None] * 0.5 * (xr[None, :] + 1.0)  # (n, n_r)
    wrad = 0.5 * wr[None, :] * (ro - ri)[:, None] * r  # weight r dr
    wrad = wrad / wrad.sum(axis=1, keepdims=True)
    phi = 2 * np.pi * np.arange(n_phi) / n_phi
    py = dy[:, None, None] + r[:, :, None] * np.cos(phi)[None, None, :]  # (n, n_r, n_phi)
    pz = dz[:, None, None] + r[:, :, None] * np.sin(phi)[None, None, :]
    wround = (wrad[:, :, None] / n_phi * np.ones(n_phi)).reshape(r.shape[0], -1)
    py = py.reshape(r.shape[0], -1)
    pz = pz.reshape(r.shape[0], -1)
    yb = np.broadcast_to(ys, (r.shape[0], n_w, n_t)).reshape(r.shape[0], -1)
    zb = np.broadcast_to(zs, (r.shape[0], n_w, n_t)).reshape(r.shape[0], -1)
    rho = np.hypot(py[:, None, :] - yb[:, :, None], pz[:, None, :] - zb[:, :, None])
    g = parallel_filament_integral(a0[:, None, None], a1[:, None, None], b0[:, None, None],
                                   b1[:, None, None], np.maximum(rho, 1e-300))
    return MU0_4PI * np.einsum("nij,i,nj->n", g, wbar, wround)
