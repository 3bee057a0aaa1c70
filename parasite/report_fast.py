"""The report of a board held as the inductance operator (``report --inductance fast``):
the same JSON keys as :func:`parasite.report.build_report` where the operator gives
them, and an ``inductance`` section that says how the numbers were found and what is
left out, and why.

From the operator (:class:`parasite.extract.operator.FastInductance`): the segments'
self inductances (its diagonal), the loops (:mod:`parasite.loops_operator`: GMRES
with one product per iteration, the iterations per loop), the loops' mutual
inductances, limits, pick-up and dipoles (one product per loop, one per pair sharing
copper), the segment couplings of the exact near field, and the probes
(:func:`parasite.probes.probe_report`, the dense path's function: the leads' loop
inductance from the exact block of their own segments, the pick-up from one product of
all the probes' lead vectors and the loops' currents).

Left out (each named in ``inductance.left_out`` and in the text report): the circuit
model (``branches``, the written couplings, the coupling threshold's choice and the
reduced model): they are the augmented netlist's (``augment --inductance fast`` builds
the reduced model, :func:`parasite.augment.augment_fast`, and its report has them);
couplings of far pairs (weak: beyond the sum of the near
radii); the ranking of each loop's pair terms beyond the exact near field.

Estimates from closed-form partial inductances: confirm them by measurement.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Any

import numpy as np
import scipy.sparse as sp

from parasite.report import CAUTION, REPORT_FORMAT, _num

if TYPE_CHECKING:
    from parasite.pipeline import FastExtraction

DEFAULT_MIN_COUPLING = 0.1
"""|k| from which near-field segment couplings are listed when none is given (the dense
path chooses its threshold from the circuit model, which the fast path does not build)."""

LEFT_OUT = (
    ("circuit model", "the branches, written couplings, the coupling threshold's choice and "
     "the reduced model belong to the augmented netlist: `parasite augment` builds them "
     "(on this path the reduced model only)"),
    ("far couplings", "segment couplings are listed from the exact near field only; pairs "
     "beyond the sum of their near radii are weak and are not listed"),
    ("loop pair terms", "each loop's pair terms are ranked over the exact near field only"),
)


def near_couplings(near: sp.spmatrix, diag: np.ndarray,
                   min_coupling: float) -> list[tuple[int, int, float, float]]:
    """Segment pairs ``i < j`` of the near field with ``|k| >= min_coupling``:
    ``(i, j, mutual H, k)``, in row order as :func:`parasite.report.segment_couplings`."""
    from parasite.network.couplings import near_field_couplings

    rows, cols, m, k = near_field_couplings(near, diag, min_coupling)
    return list(zip(rows.tolist(), cols.tolist(), m.tolist(), k.tolist(), strict=True))


def analyse_fast(extraction: FastExtraction, *, min_coupling: float | None = None,
                 progress: Callable[[int, int], None] | None = None,
                 status: Callable[[str], None] | None = None) -> dict[str, Any]:
    """The report dict of a fast-path extraction (module docstring); ``progress`` after
    each loop's solve, ``status`` after each GMRES iteration."""
    from parasite.field.loop_report import loop_coupling_matrix_operator, loop_sections
    from parasite.loops import loop_result_dict
    from parasite.loops_operator import GMRES_RTOL, loop_results_operator
    from parasite.naming import NameAllocator
    from parasite.network.names import node_names
    from parasite.probes import probe_report
    from parasite.report import add_loop_sections
    from parasite.writer import initial_current_warnings

    inputs, op, R = extraction.inputs, extraction.op, extraction.R
    graph, netlist = inputs.graph, inputs.netlist
    names = node_names(graph, NameAllocator(netlist.node_names()))
    diag = op.diagonal()
    segments = [{
        "id": s.id, "net": s.net, "kind": s.kind, "layer": s.layer,
        "from": names[s.node_from], "to": names[s.node_to],
        "length": _num(s.length), "width": _num(s.width), "thickness": _num(s.thickness),
        "inductance": _num(diag[s.index]), "resistance": _num(R[s.index]),
        "source": s.source, "name": s.name,
    } for s in graph.segments]
    k_min = DEFAULT_MIN_COUPLING if min_coupling is None else min_coupling
    couplings = [{"a": graph.segments[i].id, "b": graph.segments[j].id, "mutual": m, "k": k}
                 for i, j, m, k in near_couplings(op.near, diag, max(k_min, 1e-12))]
    # like the dense report: a loop without a frequency is divided at the low-frequency
    # limit (parasite.loops), whatever --frequency sets for the resistances
    results = (loop_results_operator(graph, netlist, op, R, progress=progress, status=status)
               if graph.routes.loops else [])
    loops = [loop_result_dict(r) for r in results]
    probes = (probe_report(graph, op, R, names, results, extraction.frequency)
              if graph.routes.probes else [])
    summary: dict[str, Any] = {
        "segments": len(graph.segments),
        "branches": 0,
        "couplings_written": 0,
        "couplings_dropped": 0,
        "min_coupling": k_min,
        "min_coupling_rule": ("given" if min_coupling is not None else
                              f"fast path: near-field couplings from |k| >= {k_min:g}"),
        "loop_errors_from_pruning": {},
        "passive": None,
        "min_eigenvalue": None,
        "sparsification": None,
        "sparsification_note": "no circuit model on the fast path (inductance.left_out)",
        "frequency": extraction.frequency,
        "loops_over_limit": sum(1 for lp in loops if lp.get("within_limit") is False),
        "inductance": "fast",
    }
    report: dict[str, Any] = {
        "format": REPORT_FORMAT,
        "netlist": inputs.netlist_path,
        "routes": inputs.routes_path,
        "segments": segments,
        "couplings": couplings,
        "loops": loops,
        "probes": probes,
        "summary": summary,
        "warnings": list(graph.warnings) + initial_current_warnings(
            netlist, set(graph.anchors)),
        "caution": CAUTION,
        "inductance": {
            "method": "fast",
            "near_pairs": op.pairs_near // 2,
            "near_radius": "near_scale max(3.5 l, l + section_ratio h) per segment",
            "section_ratio": getattr(op, "section_ratio", None),
            "near_scale": getattr(op, "near_scale", None),
            "far_field": far_field_entry(op),
            "far_field_eps": op.eps,
            "gmres_rtol": GMRES_RTOL,
            "left_out": [{"what": w, "why": y} for w, y in LEFT_OUT],
        },
        "model": {"written": None, "rule": "left out on the fast path: " + LEFT_OUT[0][1]},
    }
    if results:
        add_loop_sections(report, loop_sections(
            graph, results, None, coupling=loop_coupling_matrix_operator(results, op)))
    return report


def far_field_entry(op: Any) -> str:
    """How the operator's far field was summed (the JSON report's words)."""
    points = ("4 points per segment (2 along, split across the width)"
              if getattr(op, "width_points", False) else "2 points per segment, on the centre line")
    grid = getattr(op, "grid", None)
    if grid is None:
        return f"multipole sums over {points}"
    n = op.shape[0]
    inclined = int(grid.inclined[:n].sum())
    text = (f"horizontal copper on layer grids by FFT (spacing {grid.h * 1e3:.4g} mm, "
            f"{grid.nz} planes, 4 x 4 moment-matched nodes per piece); vertical copper by "
            f"multipole sums over {points}")
    if inclined:
        text += (f"; {inclined} inclined segments off the grid, their pairs with every "
                 f"segment exact")
    return text
