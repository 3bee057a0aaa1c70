"""Frequency-dependent resistance and inductance per unit length of a conductor
cross-section: a 2D filament (partial-element) solve with the skin and proximity effects.

Every conductor of the section (rectangles: traces, bars, planes as wide
rectangles; circles: probe leads, solid vias) is cut into cells, finer toward
its surfaces (the first cell is ``first`` skin depths at the highest frequency,
then each one ``growth`` times the previous, up to ``max_cell``). Each cell
carries a uniform current along the conductor's axis. With R_i = rho/A_i
(ohm/m) and the per-unit-length partial inductances
L'_ij = -mu0/(2 pi) G_ij (:mod:`parasite.extract.logmean`), the cells of one
conductor share one voltage drop per unit length and the cells' currents add
up to the conductor's current (W. T. Weeks, L. L. Wu, M. F. McAllister,
A. Singh, "Resistive and inductive skin effect in rectangular conductors",
IBM J. Res. Dev. 23(6), 1979)::

    (R + j w L') i = P v,     P^T i = I,     so   Z_c = (P^T (R + j w L')^-1 P)^-1    (ohm/m)

with P the cell-to-conductor incidence. All frequencies come from one symmetric
eigen-decomposition: with S = R^-1/2 L' R^-1/2 = Q diag(lam) Q^T,
(R + j w L')^-1 = R^-1/2 Q diag(1/(1 + j w lam)) Q^T R^-1/2 (exact algebra).

Z_c is referenced to 1 m: the self terms of a lone conductor include
mu0/(2 pi) ln(1 m / size); loop quantities (currents summing to zero, see
:func:`loop_impedance`) do not depend on the reference. SI throughout.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from parasite.errors import ExtractionError
from parasite.extract.logmean import disc_logmean, quadrature_logmean, quadrature_points, rect_logmean
from parasite.extract.resistance import MU0, skin_depth

RHO_COPPER = 1.7241e-8
"""Annealed copper at 20 degC, ohm m (IEC 60028, 1925)."""


@dataclass(frozen=True)
class Rect:
    """A rectangular conductor centred at (x, y), width along x and height along y (m)."""
    x: float
    y: float
    width: float
    height: float
    resistivity: float = RHO_COPPER


@dataclass(frozen=True)
class Circle:
    """A solid round conductor centred at (x, y) with the given radius (m)."""
    x: float
    y: float
    radius: float
    resistivity: float = RHO_COPPER


Conductor = Rect | Circle


@dataclass(frozen=True)
class Meshing:
    """How cells are sized: first cell ``first`` skin depths at ``f_max`` (Hz), growing by
    ``growth`` toward the inside, never wider than ``max_cell`` (m; None: no limit);
    round conductors are cut into ``sectors`` equal sectors."""
    f_max: float = 1e9
    first: float = 0.2
    growth: float = 1.2
    max_cell: float | None = None
    sectors: int = 16


@dataclass(frozen=True)
class Cells:
    """The cells of a section: kind (0 rectangle, 1 annular sector), geometry rows
    (rectangle: cx, cy, w, h; sector: cx, cy, r0, r1, theta0, theta1, in m and rad),
    area (m^2), resistance per unit length (ohm/m) and owning conductor index."""
    kind: np.ndarray
    geom: np.ndarray
    area: np.ndarray
    resistance: np.ndarray
    owner: np.ndarray
    discs: list = field(default_factory=list)  # (conductor, first cell, layers, sectors, edges)


def skin_depth_m(resistivity: float, frequency: float) -> float:
    """delta (m) of a non-magnetic conductor: :func:`parasite.extract.resistance.skin_depth`."""
    return skin_depth(resistivity, frequency)


def check_section(conductors: tuple[Conductor, ...], frequency: np.ndarray) -> None:
    """Raise ExtractionError, naming the conductor or key, for a size or resistivity that
    is not positive and finite, overlapping conductors, or a negative frequency."""
    if not conductors:
        raise ExtractionError("a cross-section needs at least one conductor", key="conductors")
    boxes = []
    for k, c in enumerate(conductors):
        sizes = (c.width, c.height) if isinstance(c, Rect) else (c.radius,)
        values = (*sizes, c.resistivity, c.x, c.y)
        if not all(math.isfinite(v) for v in values) or min(*sizes, c.resistivity) <= 0:
            raise ExtractionError(f"conductor {k} ({c!r}) needs finite positive sizes and resistivity",
                                  key=f"conductors[{k}]")
        half = (c.width / 2, c.height / 2) if isinstance(c, Rect) else (c.radius, c.radius)
        boxes.append((c.x - half[0], c.x + half[0], c.y - half[1], c.y + half[1]))
    for i in range(len(boxes)):
        for j in range(i):
            a, b = boxes[i], boxes[j]
            if a[0] < b[1] and b[0] < a[1] and a[2] < b[3] and b[2] < a[3]:
                raise ExtractionError(f"conductors {j} and {i} overlap (their bounding boxes do)",
                                      key=f"conductors[{i}]")
    f = np.asarray(frequency, dtype=float)
    if f.ndim != 1 or f.size == 0 or not np.all(np.isfinite(f)) or np.any(f < 0):
        raise ExtractionError("frequencies must be a non-empty list of finite values >= 0 Hz",
                              key="frequency")


def graded_edges(length: float, first: float, growth: float, max_cell: float | None,
                 both_ends: bool = True) -> np.ndarray:
    """Cell edges (m) on [0, length]: the first cell ``first`` wide at 0 (and at ``length``
    when ``both_ends``), each next one ``growth`` times wider, at most ``max_cell``."""
    half = length / 2 if both_ends else length
    steps = []
    pos, h = 0.0, first
    while pos + h < half * (1 - 1e-9):
        steps.append(h)
        pos += h
        h = h * growth if max_cell is None else min(h * growth, max_cell)
    if steps and half - pos < 0.5 * steps[-1]:
        steps[-1] += half - pos
    else:
        steps.append(half - pos)
    side = np.concatenate([[0.0], np.cumsum(steps)])
    side[-1] = half
    if not both_ends:
        return side
    return np.concatenate([side, length - side[-2::-1]])


def mesh_section(conductors: tuple[Conductor, ...], meshing: Meshing) -> Cells:
    """Cut every conductor into graded cells (module docstring)."""
    kinds, geoms, areas, res, owner, discs = [], [], [], [], [], []
    count = 0
    for k, c in enumerate(conductors):
        first = meshing.first * skin_depth_m(c.resistivity, meshing.f_max)
        if isinstance(c, Rect):
            ex = graded_edges(c.width, first, meshing.growth, meshing.max_cell) + c.x - c.width / 2
            ey = graded_edges(c.height, first, meshing.growth, meshing.max_cell) + c.y - c.height / 2
            cx, cy = np.meshgrid(0.5 * (ex[1:] + ex[:-1]), 0.5 * (ey[1:] + ey[:-1]), indexing="ij")
            w, h = np.meshgrid(np.diff(ex), np.diff(ey), indexing="ij")
            g = np.zeros((cx.size, 6))
            g[:, :4] = np.stack([cx.ravel(), cy.ravel(), w.ravel(), h.ravel()], axis=1)
            kinds.append(np.zeros(cx.size, int))
            a = (w * h).ravel()
        else:
            # radial edges graded from the surface inward
            er = c.radius - graded_edges(c.radius, first, meshing.growth, meshing.max_cell,
                                         both_ends=False)[::-1]
            er[0] = 0.0
            ns = meshing.sectors
            th = 2 * np.pi * np.arange(ns + 1) / ns
            r0, t0 = np.meshgrid(er[:-1], th[:-1], indexing="ij")
            r1, t1 = np.meshgrid(er[1:], th[1:], indexing="ij")
            g = np.stack([np.full(r0.size, c.x), np.full(r0.size, c.y), r0.ravel(), r1.ravel(),
                          t0.ravel(), t1.ravel()], axis=1)
            kinds.append(np.ones(r0.size, int))
            a = ((r1**2 - r0**2) * (t1 - t0) / 2).ravel()
            discs.append((k, count, er.size - 1, ns, er))
        geoms.append(g)
        areas.append(a)
        res.append(c.resistivity / a)
        owner.append(np.full(a.size, k))
        count += a.size
    return Cells(np.concatenate(kinds), np.concatenate(geoms), np.concatenate(areas),
                 np.concatenate(res), np.concatenate(owner), discs)


def logmean_matrix(cells: Cells) -> np.ndarray:
    """G_ij for all cell pairs (dimensionless, symmetric): closed forms for rectangle pairs
    and for sectors of one disc, quadrature for the rest (:mod:`parasite.extract.logmean`)."""
    n = cells.area.size
    out = np.empty((n, n))
    rect = np.flatnonzero(cells.kind == 0)
    if rect.size:
        g = cells.geom[rect]
        i, j = np.triu_indices(rect.size)
        val = rect_logmean(g[i, 0], g[i, 1], g[i, 2], g[i, 3], g[j, 0], g[j, 1], g[j, 2], g[j, 3])
        sub = np.empty((rect.size, rect.size))
        sub[i, j] = val
        sub[j, i] = val
        out[np.ix_(rect, rect)] = sub
    rnd = np.flatnonzero(cells.kind == 1)
    if rnd.size:
        pts, wts = quadrature_points(cells.kind, cells.geom)
        # a round cell with a cell of another conductor: quadrature
        gi, gj = np.meshgrid(rnd, np.arange(n), indexing="ij")
        keep = cells.owner[gi] != cells.owner[gj]
        qi, qj = gi[keep], gj[keep]
        if qi.size:
            val = quadrature_logmean(pts[qi], wts[qi], pts[qj], wts[qj])
            out[qi, qj] = val
            out[qj, qi] = val
        for _k, start, layers, sectors, er in cells.discs:
            gd = disc_logmean(er, sectors)  # (layers, layers, sectors)
            li, si = np.divmod(np.arange(layers * sectors), sectors)
            block = gd[li[:, None], li[None, :], (si[:, None] - si[None, :]) % sectors]
            idx = np.arange(start, start + layers * sectors)
            out[np.ix_(idx, idx)] = block
    return out


@dataclass(frozen=True)
class SectionImpedance:
    """Per-unit-length impedance of the conductors of a section: frequency (n_f,) Hz,
    resistance and inductance (n_f, n_c, n_c) in ohm/m and H/m (referenced to 1 m)."""
    frequency: np.ndarray
    resistance: np.ndarray
    inductance: np.ndarray
    cells: int
    external: np.ndarray
    """The w -> infinity limit of L (H/m, (n_c, n_c)), see :func:`external_inductance`."""

    @property
    def impedance(self) -> np.ndarray:
        """Z = R + j w L (ohm/m), (n_f, n_c, n_c)."""
        w = 2 * np.pi * self.frequency
        return self.resistance + 1j * w[:, None, None] * self.inductance


def _modes(conductors: tuple[Conductor, ...], meshing: Meshing) -> tuple[np.ndarray, np.ndarray, int]:
    """B = P^T R^-1/2 Q (n_c, n) and lam (n,) s of the section (module docstring)."""
    cells = mesh_section(conductors, meshing)
    return _modes_of(cells, -MU0 / (2 * np.pi) * logmean_matrix(cells), len(conductors))


def _modes_of(cells: Cells, lmat: np.ndarray, n_c: int) -> tuple[np.ndarray, np.ndarray, int]:
    rs = 1 / np.sqrt(cells.resistance)
    lam, q = np.linalg.eigh(rs[:, None] * lmat * rs[None, :])
    p = np.zeros((cells.area.size, n_c))
    p[np.arange(cells.area.size), cells.owner] = 1.0
    return (p * rs[:, None]).T @ q, lam, cells.area.size


def _impedance(b: np.ndarray, lam: np.ndarray, ncells: int, f: np.ndarray) -> SectionImpedance:
    w = 2 * np.pi * f
    y = np.einsum("ci,fi,di->fcd", b, 1 / (1 + 1j * w[:, None] * lam[None, :]), b)
    z = np.linalg.inv(y)
    res = z.real
    with np.errstate(divide="ignore", invalid="ignore"):
        ind = z.imag / w[:, None, None]
    if np.any(w == 0):  # DC: d Z/d(j w) = Y0^-1 Y1 Y0^-1
        y0 = b @ b.T
        y1 = (b * lam[None, :]) @ b.T
        z0 = np.linalg.inv(y0)
        ind[w == 0] = z0 @ y1 @ z0
    return SectionImpedance(f, res, ind, ncells, np.linalg.inv((b / lam[None, :]) @ b.T))


def solve_over_plane(conductor: Rect, gap: float, frequency: np.ndarray,
                     meshing: Meshing | None = None) -> SectionImpedance:
    """R(f), L(f) per unit length (1 x 1 matrices) of a rectangle ``gap`` (m) above the
    face of a perfectly conducting plane: its cells couple to the mirror images of the
    cells, which carry the opposite current (method of images), so
    L'_ij = -mu0/(2 pi) (G_ij - G_ij'), half the loop of the conductor and its image,
    solved with half the cells of that pair. Referenced to nothing (a loop quantity)."""
    check_section((conductor,), frequency)
    if not (math.isfinite(gap) and gap > 0):
        raise ExtractionError(f"the gap to the plane must be positive, got {gap!r} m", key="gap")
    f = np.asarray(frequency, dtype=float)
    meshing = meshing or Meshing(f_max=float(np.max(f)) if np.max(f) > 0 else 1e9)
    cells = mesh_section((conductor,), meshing)
    g = cells.geom
    face = conductor.y - conductor.height / 2 - gap
    i, j = np.triu_indices(g.shape[0])
    img = rect_logmean(g[i, 0], g[i, 1], g[i, 2], g[i, 3], g[j, 0], 2 * face - g[j, 1], g[j, 2], g[j, 3])
    gi = np.empty((g.shape[0], g.shape[0]))
    gi[i, j] = img
    gi[j, i] = img
    lmat = -MU0 / (2 * np.pi) * (logmean_matrix(cells) - gi)
    return _impedance(*_modes_of(cells, lmat, 1), f)


def solve_section(conductors: tuple[Conductor, ...] | list[Conductor], frequency: np.ndarray,
                  meshing: Meshing | None = None) -> SectionImpedance:
    """R(f), L(f) matrices per unit length of the conductors (module docstring). ``frequency``
    in Hz (>= 0; 0 is DC), the cells sized from ``meshing.f_max``."""
    conductors = tuple(conductors)
    check_section(conductors, frequency)
    meshing = meshing or Meshing(f_max=float(np.max(frequency)) if np.max(frequency) > 0 else 1e9)
    return _impedance(*_modes(conductors, meshing), np.asarray(frequency, dtype=float))


def external_inductance(conductors: tuple[Conductor, ...] | list[Conductor],
                        meshing: Meshing | None = None) -> np.ndarray:
    """The w -> infinity limit of L (H/m, (n_c, n_c)): currents set by the inductances
    alone, L_ext = (P^T L'^-1 P)^-1 = (B diag(1/lam) B^T)^-1; the current sits in the
    surface cells, so the result approaches the external inductance as the first cell
    thins."""
    return solve_section(conductors, np.array([0.0]), meshing or Meshing()).external


def loop_impedance(result: SectionImpedance, drive: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """R(f) (ohm/m) and L(f) (H/m) of the loop in which conductor k carries drive[k] times
    the loop current (e.g. (1, -1) for a trace and its return); independent of the 1 m
    reference when sum(drive) = 0."""
    e = np.asarray(drive, dtype=float)
    return (np.einsum("c,fcd,d->f", e, result.resistance, e),
            np.einsum("c,fcd,d->f", e, result.inductance, e))


class SectionCache:
    """Solves of :func:`solve_section` kept by a key of the section and its
    neighbourhood: every conductor's shape and position relative to the first
    conductor (so a section repeated elsewhere on the board hits), rounded to ``grid``
    (m), its resistivity, the meshing and the frequencies. ``hits``/``misses`` count."""

    def __init__(self, grid: float = 1e-9) -> None:
        self.grid = grid
        self.hits = 0
        self.misses = 0
        self._store: dict[tuple, SectionImpedance] = {}

    def key(self, conductors: tuple[Conductor, ...], frequency: np.ndarray, meshing: Meshing) -> tuple:
        x0, y0 = conductors[0].x, conductors[0].y
        parts = []
        for c in conductors:
            size = (c.width, c.height) if isinstance(c, Rect) else (c.radius,)
            parts.append((type(c).__name__, round((c.x - x0) / self.grid), round((c.y - y0) / self.grid),
                          *(round(v / self.grid) for v in size), c.resistivity))
        return (tuple(parts), tuple(np.asarray(frequency, dtype=float).tolist()), meshing)

    def solve(self, conductors: tuple[Conductor, ...] | list[Conductor], frequency: np.ndarray,
              meshing: Meshing | None = None) -> SectionImpedance:
        conductors = tuple(conductors)
        meshing = meshing or Meshing()
        k = self.key(conductors, frequency, meshing)
        if k in self._store:
            self.hits += 1
        else:
            self.misses += 1
            self._store[k] = solve_section(conductors, frequency, meshing)
        return self._store[k]
