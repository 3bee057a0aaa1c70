"""Broadband branches: each branch of the network as a passive R-L ladder fitted to its
R(f) and L(f) over a band (skin and proximity effect).

Per segment, the change of R and of the self L with frequency comes from a 2D
cross-section solve (:mod:`parasite.extract.crosssection`, Weeks et al. 1979):

- a trace (bar) over or under a return plane: the trace and its mirror image (the
  method of images, as the DC partial values use), driven as a loop (+1, -1); half
  the pair's change of Z is the trace's own skin and proximity effect. The plane's
  loss is added by scaling that change by (1 + q), q the ratio of the plane's excess
  resistance to the trace's at the band's top, from a solve of the trace over a strip
  of the plane (``strip`` gaps wider than the trace each side; the return current of
  a trace over a plane stays within a few gaps of it). Scaling one change keeps R(f)
  and L(f) consistent (a positive multiple of an R-L impedance is one); a strip's
  uniform current at DC is not used as the reference, since it would make the change
  of L depend on the strip's width. Approximation: the plane's change is taken to have
  the trace's shape over frequency;
- a trace with no plane: the bar alone (the change of its self L is independent of
  the 1 m reference of the solve);
- a solid round conductor (solid via, probe lead): the exact internal impedance
  (:mod:`parasite.extract.wire_skin`, Bessel functions);
- a hollow via barrel: no change (kept at its DC values; stated in the report).

The branch's R(f) = R_dc + sum of the segments' R'(f) - R'(0) times length, and
L(f) = L_dc + sum of (L'(f) - L'(0)) times length, so the DC partial values
(3D closed forms, images) stay the low-frequency limit. The ladder
(:func:`parasite.extract.ladder.fit_ladder`) is fitted with the fewest stages (3 to
``max_stages``) that meet ``max_error``; the couplings go on its L0, the inductor
carrying the external flux, with k recomputed from the mutual inductance and the
L0 values. Sections repeated on the board are solved once (``SectionCache``).
SI units throughout.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from parasite.errors import ExtractionError
from parasite.extract.crosssection import (
    Meshing,
    Rect,
    SectionCache,
    loop_impedance,
    solve_over_plane,
    solve_section,
)
from parasite.extract.ladder import DEFAULT_BAND, Ladder, fit_ladder
from parasite.extract.resistance import MU0
from parasite.extract.wire_skin import round_wire_internal_impedance

if TYPE_CHECKING:
    from parasite.network import Network

FAST_MESHING = Meshing(f_max=1e9, first=0.5, growth=1.5, max_cell=None, sectors=16)
"""The cells of the broadband solves: first cell half a skin depth at the band's top,
growing 1.5x inward (checked against the finer default meshing in
tests/network/test_ladders.py)."""


@dataclass(frozen=True)
class BroadbandOptions:
    """band (Hz), frequencies per decade of the fit, the fit's target relative error,
    the largest number of ladder stages, and the plane strip's overhang in gaps."""
    band: tuple[float, float] = DEFAULT_BAND
    per_decade: int = 5
    max_error: float = 0.01
    max_stages: int = 8
    strip: float = 5.0
    first: float = FAST_MESHING.first
    growth: float = FAST_MESHING.growth


@dataclass(frozen=True)
class BranchLadders:
    """Per branch: the target R(f) (ohm) and L(f) (H) at ``frequency`` (Hz), the fitted
    ladders, the couplings' k on the ladders' L0 (aligned with the network's selection),
    the factor applied to the mutual inductances to keep the L0 matrix positive
    definite (1: none), and the solve statistics."""
    frequency: np.ndarray
    resistance: np.ndarray  # (B, F) ohm
    inductance: np.ndarray  # (B, F) H
    ladders: list[Ladder]
    k: np.ndarray
    mutual_scale: float
    solves: int
    cache_hits: int
    hollow_vias: int
    band: tuple[float, float]

    @property
    def max_error_r(self) -> float:
        return max((lad.max_error_r for lad in self.ladders), default=0.0)

    @property
    def max_error_l(self) -> float:
        return max((lad.max_error_l for lad in self.ladders), default=0.0)

    def report(self, branch_ids: list[str]) -> dict[str, Any]:
        """The JSON-ready summary (SI)."""
        per = [{"branch": bid, "stages": int(lad.r.size), "r0": lad.r0, "l0": lad.l0,
                "r_dc": float(r[0]), "r_top": float(r[-1]), "l_dc": float(ind[0]), "l_top": float(ind[-1]),
                "max_error_r": lad.max_error_r, "max_error_l": lad.max_error_l}
               for bid, lad, r, ind in zip(branch_ids, self.ladders, self.resistance, self.inductance,
                                           strict=True)]
        return {"band": list(self.band), "max_error_r": self.max_error_r,
                "max_error_l": self.max_error_l, "cross_section_solves": self.solves,
                "cache_hits": self.cache_hits, "hollow_vias_at_dc": self.hollow_vias,
                "mutual_scale": self.mutual_scale, "branches": per}

    def header_lines(self) -> list[str]:
        """Comment lines for the netlist's header."""
        lines = [f"* broadband: R-L ladders fitted over {self.band[0]:g}-{self.band[1]:g} Hz "
                 f"(cross-section solves {self.solves}); fit error at most "
                 f"{100 * self.max_error_r:.2f}% on R, {100 * self.max_error_l:.2f}% on L"]
        if self.mutual_scale < 1:
            lines.append(f"* broadband: mutual inductances scaled by {self.mutual_scale:.4f} to keep "
                         "the matrix of the ladders' L0 positive definite")
        return lines


def fit_frequencies(band: tuple[float, float], per_decade: int) -> np.ndarray:
    """0 Hz (the DC reference) and log-spaced frequencies covering ``band`` (Hz)."""
    lo, hi = band
    n = max(int(np.ceil(per_decade * np.log10(hi / lo))) + 1, 12)
    return np.concatenate([[0.0], np.geomspace(lo, hi, n)])


def _plane_thickness(network: Network, face: float) -> float:
    for pl in network.graph.planes:
        if abs(pl.z_top - face) < 1e-12 or abs(pl.z_bottom - face) < 1e-12:
            return float(pl.z_top - pl.z_bottom)
    return 35e-6


def segment_changes(network: Network, f: np.ndarray, opts: BroadbandOptions,
                    cache: SectionCache) -> tuple[np.ndarray, np.ndarray, int, int, int]:
    """(N, F) changes of R (ohm) and of the self L (H) of every segment from f = 0 to
    ``f`` (module docstring), the number of hollow round conductors left at DC, and the
    number of distinct sections over a plane solved and of repeats taken from the cache
    (keyed by width, thickness, gap and plane thickness to 1 nm)."""
    solved: dict[tuple, tuple[np.ndarray, np.ndarray]] = {}
    hits = 0
    arrays = network.graph.arrays
    n = len(arrays)
    dr, dl = np.zeros((n, f.size)), np.zeros((n, f.size))
    rho = network.extraction.inputs.routes.copper.resistivity
    meshing = Meshing(f_max=float(f.max()), first=opts.first, growth=opts.growth)
    length = arrays.length
    hollow = 0
    for i in np.flatnonzero(network.conducting):
        if arrays.round[i]:
            if arrays.inner_radius[i] > 0:
                hollow += 1
                continue
            z = round_wire_internal_impedance(float(arrays.radius[i]), rho, f) * length[i]
            dr[i] = z.real - z.real[0]
            dl[i, 1:] = z.imag[1:] / (2 * np.pi * f[1:]) - MU0 / (8 * np.pi) * length[i]
            continue
        w, t = float(arrays.width[i]), float(arrays.thickness[i])
        face = float(arrays.mirror_z[i])
        trace = Rect(0.0, 0.0, w, t, rho)
        if not np.isfinite(face):
            res = cache.solve((trace,), f, meshing)
            dr[i] = (res.resistance[:, 0, 0] - res.resistance[0, 0, 0]) * length[i]
            dl[i] = (res.inductance[:, 0, 0] - res.inductance[0, 0, 0]) * length[i]
            continue
        zmid = 0.5 * (arrays.start[i, 2] + arrays.end[i, 2])
        gap = max(abs(zmid - face) - t / 2, 1e-7)
        tp = _plane_thickness(network, face)
        key = tuple(round(v * 1e9) for v in (w, t, gap, tp))
        if key not in solved:
            solved[key] = _over_plane(trace, gap, tp, f, opts)
        else:
            hits += 1
        d_r, d_l = solved[key]
        dr[i] = d_r * length[i]
        dl[i] = d_l * length[i]
    return dr, dl, hollow, len(solved), hits


def _over_plane(trace: Rect, gap: float, tp: float, f: np.ndarray,
                opts: BroadbandOptions) -> tuple[np.ndarray, np.ndarray]:
    """Changes of R' (ohm/m) and L' (H/m) from 0 Hz of a trace ``gap`` over a plane of
    thickness ``tp`` (module docstring): the trace over its image, scaled by 1 + q."""
    w, t = trace.width, trace.height
    fine = Meshing(f_max=float(f.max()), first=opts.first, growth=opts.growth, max_cell=max(w / 4, gap / 2))
    res = solve_over_plane(trace, gap, f, fine)
    r, ind = res.resistance[:, 0, 0], res.inductance[:, 0, 0]
    # the plane's share of the loss at the top of the band, on a coarser mesh (one frequency)
    top = np.array([0.0, float(f.max())])
    coarse = Meshing(f_max=float(f.max()), first=1.0, growth=1.8, max_cell=max(w / 4, gap / 2))
    plane = Rect(0.0, -(t / 2 + gap + tp / 2), w + 2 * opts.strip * gap, tp, trace.resistivity)
    r_strip, _ = loop_impedance(solve_section((trace, plane), top, coarse), np.array([1.0, -1.0]))
    r_img = solve_over_plane(trace, gap, top, coarse).resistance[:, 0, 0]
    excess = r_img[1] - r_img[0]
    q = max((r_strip[1] - r_img[1]) / excess, 0.0) if excess > 0 else 0.0
    return (1 + q) * (r - r[0]), (1 + q) * (ind - ind[0])


def _fit(f: np.ndarray, r: np.ndarray, ind: np.ndarray, opts: BroadbandOptions) -> Ladder:
    best = None
    for stages in range(3, opts.max_stages + 1):
        lad = fit_ladder(f, r, ind, stages=stages, band=opts.band)
        if best is None or max(lad.max_error_r, lad.max_error_l) < max(best.max_error_r, best.max_error_l):
            best = lad
        if max(lad.max_error_r, lad.max_error_l) <= opts.max_error:
            break
    assert best is not None
    return _prune(best, f, r, ind)


def _prune(lad: Ladder, f: np.ndarray, r: np.ndarray, ind: np.ndarray) -> Ladder:
    """Drop sections too small to matter (R_k below 1e-3 of R0 or L_k below 1e-4 of L0:
    each changes R or L by at most that fraction) and restate the fit's errors: such
    elements (down to 1e-22 H) only make a simulator's time steps collapse."""
    keep = (lad.r >= 1e-3 * lad.r0) & (lad.l >= 1e-4 * lad.l0)
    if keep.all():
        return lad
    out = Ladder(lad.r0, lad.l0, lad.r[keep], lad.l[keep], lad.band, 0.0, 0.0)
    z = out.impedance(f)
    return Ladder(out.r0, out.l0, out.r, out.l, lad.band, float(np.max(np.abs(z.real / r - 1))),
                  float(np.max(np.abs(z.imag / (2 * np.pi * f) / ind - 1))))


def ladder_couplings(self_l: np.ndarray, l0: np.ndarray, i: np.ndarray, j: np.ndarray,
                     k: np.ndarray) -> tuple[np.ndarray, float]:
    """k of the couplings moved onto the ladders' L0: the mutual M = k sqrt(L_i L_j) of the
    written DC matrix is kept (times a common factor <= 1 when needed so that the L0
    matrix stays positive definite), k0 = M / sqrt(L0_i L0_j)."""
    m = k * np.sqrt(self_l[i] * self_l[j])
    k0 = m / np.sqrt(l0[i] * l0[j])
    if k0.size == 0:
        return k0, 1.0
    d = 1 / np.sqrt(l0)
    for scale in (1.0, 0.999, 0.99, 0.98, 0.95, 0.9, 0.8, 0.5, 0.0):
        a = np.eye(l0.size)
        a[i, j] = a[j, i] = scale * m * d[i] * d[j]
        if np.linalg.eigvalsh(a)[0] > 1e-6:
            return scale * k0, scale
    raise ExtractionError("the ladders' L0 matrix is not positive definite", key="broadband")


def branch_ladders(network: Network, opts: BroadbandOptions | None = None) -> BranchLadders:
    """The ladders of every branch of ``network`` (module docstring). The network's R
    must be the DC resistance (no ``--frequency``)."""
    opts = opts or BroadbandOptions()
    lo, hi = opts.band
    if not (0 < lo < hi and np.isfinite(hi)):
        raise ExtractionError(f"the band must be 0 < FMIN < FMAX, got {lo:g}, {hi:g} Hz", key="band")
    if network.extraction.frequency is not None:
        raise ExtractionError("a broadband model starts from the DC resistance: "
                              "give no single --frequency with it", key="frequency")
    f = fit_frequencies(opts.band, opts.per_decade)
    cache = SectionCache()
    dr, dl, hollow, n_plane, plane_hits = segment_changes(network, f, opts, cache)
    sel = network.selection
    self_l = sel.self_inductance if sel is not None else np.diag(network.L)
    rows_r, rows_l, ladders = [], [], []
    fits: dict[bytes, Ladder] = {}
    for b, br in enumerate(network.branches):
        seg = list(br.segments)
        r = network.R[b] + dr[seg].sum(axis=0)
        ind = self_l[b] + dl[seg].sum(axis=0)
        rows_r.append(r)
        rows_l.append(ind)
        key = np.concatenate([r, ind]).astype(np.float32).tobytes()  # equal branches fit once
        if key not in fits:
            fits[key] = _fit(f[1:], r[1:], ind[1:], opts)
        ladders.append(fits[key])
    l0 = np.array([lad.l0 for lad in ladders])
    if sel is not None:
        k0, scale = ladder_couplings(np.asarray(self_l, float), l0, sel.i, sel.j, sel.k)
    else:
        k0, scale = np.zeros(0), 1.0
    b = len(network.branches)
    return BranchLadders(f, np.array(rows_r).reshape(b, f.size), np.array(rows_l).reshape(b, f.size),
                         ladders, k0, scale, cache.misses + n_plane,
                         cache.hits + plane_hits, hollow, (float(lo), float(hi)))
