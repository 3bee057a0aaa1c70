"""Reference: 2D finite-element eddy-current solve of a cross-section (scikit-fem).

Magneto-quasistatic diffusion for the axial vector potential A (V s/m) in the
plane of the section, conductors k with conductivity sigma_k and an unknown
uniform applied field V_k (V/m, the voltage drop per unit length)::

    -div(grad A)/mu0 = J,   J = sigma_k (V_k - j w A) in conductor k, 0 outside,
    Int_k J dS = I_k,   A = 0 on the outer boundary of the domain.

Galerkin with quadratic triangles (scikit-fem ElementTriP2), V eliminated by
its Schur complement around a sparse LU of the A block (scipy). Z_c[:, k] = V for I = e_k
(ohm/m). The outer boundary sets the reference of the self inductances;
loop quantities (currents summing to zero) do not depend on it beyond the
truncation of a dipole field, O((size/D)^2). Used only by the tests, as a
reference independent of the filament method.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse.linalg as spla
from scipy.spatial import Delaunay
from skfem import Basis, BilinearForm, ElementTriP2, LinearForm, MeshTri, asm
from skfem.helpers import dot, grad

MU0 = 4e-7 * np.pi


@BilinearForm
def _stiff(u, v, w):
    return dot(grad(u), grad(v))


@BilinearForm
def _mass(u, v, w):
    return u * v


@LinearForm
def _one(v, w):
    return v


def eddy_impedance(mesh: MeshTri, inside: list, resistivity: list[float],
                   frequency: np.ndarray) -> np.ndarray:
    """Z_c (n_f, n_c, n_c) in ohm/m. ``inside[k]`` maps element centroids (2, n) in m to a
    boolean mask of conductor k; mesh edges must follow the conductors' boundaries."""
    element = ElementTriP2()
    basis = Basis(mesh, element)
    centroid = mesh.p[:, mesh.t].mean(axis=1)
    k_mat = asm(_stiff, basis) / MU0
    interior = basis.complement_dofs(basis.get_dofs())
    masses, loads, areas = [], [], []
    for test in inside:
        sub = Basis(mesh, element, elements=np.flatnonzero(test(centroid)))
        masses.append(asm(_mass, sub))
        b = asm(_one, sub)
        loads.append(b)
        areas.append(b.sum())
    nc = len(inside)
    sig = 1 / np.asarray(resistivity, dtype=float)
    out = np.empty((len(frequency), nc, nc), dtype=complex)
    b_all = np.stack(loads, axis=1)  # (n, nc)
    for fi, f in enumerate(np.asarray(frequency, dtype=float)):
        w = 2 * np.pi * f
        a_block = k_mat.astype(complex) + sum(1j * w * s * m for s, m in zip(sig, masses, strict=True))
        # eliminate V: A = X V with a_block X = B sigma, then
        # (diag(sigma area) - j w sigma B^T X) V = I
        lu = spla.splu(a_block[interior][:, interior].tocsc(), permc_spec="MMD_AT_PLUS_A")
        x = lu.solve((b_all[interior] * sig).astype(complex))
        c_mat = np.diag(sig * np.asarray(areas)) - 1j * w * (b_all[interior] * sig).T @ x
        out[fi] = np.linalg.inv(c_mat)
    return out


def graded(a: float, b: float, first: float, growth: float, max_cell: float | None = None,
           both: bool = True) -> np.ndarray:
    """Points on [a, b] (m), spacing ``first`` at a (and at b when ``both``), growing by
    ``growth``, at most ``max_cell``."""
    half = (b - a) / 2 if both else (b - a)
    pts, pos, h = [0.0], 0.0, first
    while pos + h < half * (1 - 1e-9):
        pos += h
        pts.append(pos)
        h = h * growth if max_cell is None else min(h * growth, max_cell)
    if half - pts[-1] < 0.5 * (pts[-1] - pts[-2] if len(pts) > 1 else half):
        pts[-1] = half
    else:
        pts.append(half)
    side = np.asarray(pts)
    if not both:
        return a + side
    return np.concatenate([a + side, b - side[-2::-1]])


def axis_lines(intervals: list[tuple[float, float]], outer: float, first: float, growth: float,
               max_cell: float | None, outer_growth: float = 1.8) -> np.ndarray:
    """Grid lines (m) on [-outer, outer] graded toward the ends of every interval (conductor
    extents and the gaps between them), coarsening geometrically outside."""
    ends = sorted({v for iv in intervals for v in iv})
    lines = [np.asarray(ends)]
    for lo, hi in zip(ends[:-1], ends[1:], strict=True):
        lines.append(graded(lo, hi, first, growth, max_cell))
    lines.append(ends[0] - (graded(0.0, ends[0] + outer, first, outer_growth, None, both=False)))
    lines.append(ends[-1] + graded(0.0, outer - ends[-1], first, outer_growth, None, both=False))
    pts = np.unique(np.round(np.concatenate(lines), 15))
    return pts


def polar_mesh(radius: float, outer: float, first: float, growth: float, n_angle: int) -> MeshTri:
    """Disc of radius ``outer`` (m) with a ring of nodes on r = ``radius``, radial spacing
    ``first`` at that ring growing by ``growth`` both ways; Delaunay triangulation."""
    inner = radius - graded(0.0, radius, first, growth, None, both=False)
    out = radius + graded(0.0, outer - radius, first, growth, None, both=False)
    r = np.unique(np.concatenate([inner, out]))
    r = r[r > 0]
    th = 2 * np.pi * np.arange(n_angle) / n_angle
    pts = np.concatenate([[[0.0, 0.0]], np.stack([np.outer(r, np.cos(th)).ravel(),
                                                  np.outer(r, np.sin(th)).ravel()], axis=1)])
    tri = Delaunay(pts)
    return MeshTri(pts.T, tri.simplices.T)
