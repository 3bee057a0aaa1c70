"""The report's sections on loops as neighbours: the mutual inductance of
every pair of ``[[loop]]`` entries (shared copper and flux parts), the
voltage a victim picks up from an aggressor's current slope, the limits on a
pair's mutual, and each loop's magnetic dipole moment with a small-loop
radiated-field estimate.

Inputs are the loop results (:class:`parasite.loops.LoopResult`, with their
segment currents per 1 A) and the partial inductance matrix; SI units
throughout (H, V, A/s, A m^2, V/m, m, Hz). The parts' own inductance
(``[[part]]``) is lumped and uncoupled: it is in a loop's own total, never in
a mutual. Estimates for comparing layouts, not compliance results.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from parasite.field.dipole import dipole_moment, image_dipole, small_loop_field
from parasite.field.mutual import CouplingMatrix, coupling_matrix, induced_voltage

FAR_FIELD_DISTANCE = 3.0
"""m: the distance of the radiated estimate (a common test distance for emissions)."""
REFERENCE_FREQUENCY = 100e6
"""Hz: the frequency of the radiated estimate for a loop that gives none."""
ESTIMATE_NOTE = (
    "small-loop estimate (magnetic dipole, free space, 1 A of loop current, direction of the "
    "maximum; Ott 2009 sec. 12.1): for comparing layouts, not a compliance result"
)


def _num(x: float) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def loop_coupling_matrix(results: Sequence[Any], L: np.ndarray) -> CouplingMatrix:
    """Mutual, k and the shared/flux split of every pair of loops (copper only),
    from the loops' segment currents (:meth:`LoopResult.segment_currents`)."""
    n = L.shape[0]
    C = np.vstack([r.segment_currents(n) for r in results]) if results else np.zeros((0, n))
    if not np.any(C.imag):
        C = C.real
    return coupling_matrix(L, C)


def pair_entries(results: Sequence[Any], m: CouplingMatrix) -> list[dict[str, Any]]:
    """One entry per pair ``a < b`` (file order): mutual, quadrature, k, shared, flux (H)."""
    out = []
    for a in range(len(results)):
        for b in range(a + 1, len(results)):
            out.append({
                "a": results[a].name, "b": results[b].name,
                "mutual": float(m.mutual[a, b]), "k": _num(m.k[a, b]),
                "shared": float(m.shared[a, b]), "flux": float(m.flux[a, b]),
                "quadrature": float(m.quadrature[a, b]),
            })
    return out


def limit_entries(specs: Sequence[Any], results: Sequence[Any],
                  m: CouplingMatrix) -> list[dict[str, Any]]:
    """The ``mutual`` limits of the loops: ``|M| <= limit`` per named pair."""
    index = {r.name: k for k, r in enumerate(results)}
    out = []
    for spec in specs:
        for lim in spec.mutual:
            value = float(m.mutual[index[spec.name], index[lim.loop]])
            out.append({"loop": spec.name, "other": lim.loop, "mutual": value, "limit": lim.limit,
                        "within_limit": bool(abs(value) <= lim.limit), "line": spec.line,
                        "key": f"loop[{spec.index}].mutual[{lim.index}]"})
    return out


def pickup_entries(specs: Sequence[Any], results: Sequence[Any],
                   m: CouplingMatrix) -> list[dict[str, Any]]:
    """For each loop with a ``didt`` (the aggressor) and every other loop (the
    victim): ``v = M di/dt`` (V), the open victim's induced voltage."""
    out = []
    for a, spec in enumerate(specs):
        if spec.didt is None:
            continue
        for v, victim in enumerate(results):
            if v == a:
                continue
            mutual = float(m.mutual[v, a])
            out.append({"victim": victim.name, "aggressor": spec.name, "didt": spec.didt,
                        "mutual": mutual, "voltage": float(induced_voltage(mutual, spec.didt))})
    return out


def _hops(spec: Any, graph: Any) -> tuple[np.ndarray, np.ndarray, bool]:
    """The loop's element hops as straight segments between their pins' points
    (start, end (h, 3) m), carrying the loop current from the copper's side; False
    when a terminal of a hop is not placed by a pin (the path stays open there)."""
    where = {(p.pin.element, p.pin.term): graph.nodes[p.node].point for p in graph.pins}
    stops = []
    for text in spec.path:
        elem, _, term = text.strip().rpartition(":")
        stops.append((elem.strip().lower(), term.strip().lower()))
    starts, ends, closed = [], [], True
    for j, a in enumerate(stops):
        b = stops[(j + 1) % len(stops)]
        if a[0] != b[0]:
            continue
        if a in where and b in where:
            starts.append(where[a])
            ends.append(where[b])
        else:
            closed = False
    return np.reshape(starts, (-1, 3)), np.reshape(ends, (-1, 3)), closed


def dipole_entries(specs: Sequence[Any], results: Sequence[Any], graph: Any, *,
                   distance: float = FAR_FIELD_DISTANCE,
                   reference_frequency: float = REFERENCE_FREQUENCY) -> list[dict[str, Any]]:
    """Each loop's magnetic dipole moment per 1 A (copper currents plus its
    element hops, :func:`parasite.field.dipole.dipole_moment`; with the images
    in the return planes, :func:`image_dipole`) and the small-loop radiated
    field at ``distance`` (m) at the loop's frequency (else
    ``reference_frequency``), from the moment without images (the larger)."""
    arrays = graph.arrays
    out = []
    for spec, r in zip(specs, results, strict=True):
        seg = r.segments if r.segments is not None else np.zeros(0, int)
        cur = r.currents[seg] if r.currents is not None else np.zeros(0)
        hs, he, closed = _hops(spec, graph)
        start = np.vstack([arrays.start[seg], hs])
        end = np.vstack([arrays.end[seg], he])
        mirror = np.concatenate([arrays.mirror_z[seg], np.full(len(hs), np.nan)])
        currents = np.concatenate([np.asarray(cur), np.ones(len(hs))])
        if len(start) == 0:
            continue
        mom = dipole_moment(start, end, currents)
        img = image_dipole(start, end, currents, mirror, mom.origin)
        pts = np.vstack([start, end])
        size = float(np.max(np.ptp(pts[:, :2], axis=0)))
        f = r.frequency if r.frequency > 0 else reference_frequency
        est = small_loop_field(mom.magnitude, f, distance, size=size)
        real = not np.iscomplexobj(mom.moment) or not np.any(np.imag(mom.moment))
        vec = np.real(mom.moment) if real else np.abs(mom.moment)
        out.append({
            "loop": r.name, "moment": [float(x) for x in vec], "magnitude": mom.magnitude,
            "moment_with_images": img.magnitude, "closed": closed, "size": size,
            "frequency": f, "distance": distance, "e_field": est.e_field,
            "e_field_dbuv": 20.0 * math.log10(est.e_field / 1e-6) if est.e_field > 0 else None,
            "far_field": est.far_field, "small_loop": est.small_loop, "note": ESTIMATE_NOTE,
        })
    return out


def loop_coupling_matrix_operator(results: Sequence[Any], op: Any) -> CouplingMatrix:
    """:func:`loop_coupling_matrix` with the inductance as an operator (``op.matvec``)."""
    from parasite.field.mutual import coupling_matrix_operator

    n = op.shape[0]
    C = np.vstack([r.segment_currents(n) for r in results]) if results else np.zeros((0, n))
    if not np.any(C.imag):
        C = C.real
    return coupling_matrix_operator(op, C)


def loop_sections(graph: Any, results: Sequence[Any], L: np.ndarray | None,
                  coupling: CouplingMatrix | None = None) -> dict[str, Any]:
    """The report's loop-coupling sections: ``loop_pairs``, ``mutual_limits``,
    ``pickup`` and ``dipoles`` (lists of JSON-ready dicts, SI); ``coupling`` (the
    loops' coupling matrix, e.g. :func:`loop_coupling_matrix_operator`) instead of
    the dense ``L``."""
    specs = list(graph.routes.loops)
    if not results:
        return {"loop_pairs": [], "mutual_limits": [], "pickup": [], "dipoles": []}
    m = coupling if coupling is not None else loop_coupling_matrix(
        results, np.asarray(L, dtype=float))
    return {
        "loop_pairs": pair_entries(results, m),
        "mutual_limits": limit_entries(specs, results, m),
        "pickup": pickup_entries(specs, results, m),
        "dipoles": dipole_entries(specs, results, graph) if len(graph.segments) else [],
    }
