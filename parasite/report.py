"""The report of a run: what was extracted, as a JSON-ready dict, aligned text
or CSV (keys and units per the command-line contract: SI, no unit strings)."""

from __future__ import annotations

import csv
import io
import json
import math
from typing import Any

import numpy as np

REPORT_FORMAT = "parasite-report/1"
CAUTION = (
    "Estimates from closed-form partial-inductance formulas: confirm them by measurement. "
    "Probing a live power stage is hazardous: follow local codes and licensed practice."
)


def _num(x: float) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def segment_couplings(L: np.ndarray, min_coupling: float) -> list[tuple[int, int, float, float]]:
    """Segment pairs (i < j) with |k| >= ``min_coupling``: (i, j, mutual H, k),
    computed in row blocks so that no second N x N array is made."""
    from parasite.network.couplings import coupling_blocks

    out: list[tuple[int, int, float, float]] = []
    for r0, k in coupling_blocks(L):
        rows, cols = np.nonzero(np.abs(k) >= min_coupling)
        sel = cols > rows + r0
        rows, cols = rows[sel], cols[sel]
        out += zip((rows + r0).tolist(), cols.tolist(), L[rows + r0, cols].tolist(),
                   k[rows, cols].tolist(), strict=True)
    return out


def node_labels(network: Any) -> dict[int, str]:
    """Node names for the report: the netlist's where the copper has them, else
    ``<net>#<id>`` (a board whose copper is not written)."""
    graph = network.graph
    return network.node_names or {n.id: f"{n.net}#{n.id}" for n in graph.nodes}


def build_report(network: Any, loops: list[dict[str, Any]],
                 probe_entries: list[dict[str, Any]]) -> dict[str, Any]:
    """The JSON report of one run (see docs: command-line contract) from the
    :class:`parasite.network.Network` and the loop and probe entries
    (:func:`parasite.loops.loop_result_dict`, :func:`parasite.probes.probe_report`)."""
    extraction = network.extraction
    inputs = extraction.inputs
    graph = inputs.graph
    L, R = extraction.L, extraction.R
    names = node_labels(network)
    segments = []
    for s in graph.segments:
        segments.append({
            "id": s.id, "net": s.net, "kind": s.kind, "layer": s.layer,
            "from": names[s.node_from], "to": names[s.node_to],
            "length": _num(s.length), "width": _num(s.width), "thickness": _num(s.thickness),
            "inductance": _num(L[s.index, s.index]), "resistance": _num(R[s.index]),
            "source": s.source, "name": s.name,
        })
    summary: dict[str, Any] = {
        "segments": len(graph.segments),
        "branches": len(network.branches),
        # what is written: set_written_summary, once the model is chosen
        "couplings_written": 0,
        "couplings_dropped": 0,
        "min_coupling": network.min_coupling if network.chosen is not None else None,
        "min_coupling_rule": "",
        "loop_errors_from_pruning": {},
        "passive": None,
        "min_eigenvalue": None,
        "sparsification": None,
        "sparsification_note": "",
        "frequency": extraction.frequency,
        "loops_over_limit": sum(1 for lp in loops if lp.get("within_limit") is False),
    }
    return {
        "format": REPORT_FORMAT,
        "netlist": inputs.netlist_path,
        "routes": inputs.routes_path,
        "segments": segments,
        "couplings": [],
        "loops": loops,
        "probes": probe_entries,
        "summary": summary,
        "warnings": list(graph.warnings),
        "caution": CAUTION,
    }


def reduced_summary(summary: dict[str, Any], reduction: Any) -> None:
    """The summary's figures of a written reduced model (a
    :class:`parasite.network.reduce_choice.Reduction`): its couplings, passivity as
    written."""
    r = reduction.realisation
    summary.update({
        "couplings_written": int((r.k != 0).sum()) // 2, "couplings_dropped": 0,
        "min_coupling": 0.0,
        "min_coupling_rule": "reduced model: every coupling of its inductors is written",
        "passive": bool(reduction.passive), "min_eigenvalue": _num(r.min_eig_L),
    })


def set_written_summary(report: dict[str, Any], network: Any, reduction: Any = None) -> None:
    """The report's couplings and the summary's figures of what is written: the
    reduced model's when ``reduction`` (a
    :class:`parasite.network.reduce_choice.Reduction`) is written, else the full
    model's coupling selection. Passivity is certified on what is written: after a
    reduction that is a small matrix, and neither the full matrix's O(N^3)
    eigenvalue nor its coupling threshold search is run. ``couplings`` lists the
    segment pairs with |k| at or above the full model's threshold, or the fixed
    :data:`parasite.network.threshold.FALLBACK` when the reduced model is written."""
    from parasite.network.threshold import FALLBACK

    summary = report["summary"]
    graph, L = network.graph, network.extraction.L
    if reduction is not None:
        reduced_summary(summary, reduction)
        listed = FALLBACK
    else:
        selection, threshold = network.selection, network.threshold
        summary.update({
            "couplings_written": int(selection.kept) if selection is not None else 0,
            "couplings_dropped": int(selection.dropped) if selection is not None else 0,
            "min_coupling": network.min_coupling,
            "min_coupling_rule": threshold.rule if threshold is not None else "",
            "loop_errors_from_pruning": (dict(threshold.loop_errors) if threshold is not None
                                         else {}),
            "passive": bool(selection is None or selection.min_eigenvalue > 0),
            "min_eigenvalue": _num(selection.min_eigenvalue) if selection is not None else None,
            "sparsification": selection.method if selection is not None else None,
            "sparsification_note": selection.note if selection is not None else "",
        })
        listed = network.min_coupling
    report["couplings"] = [
        {"a": graph.segments[i].id, "b": graph.segments[j].id, "mutual": m, "k": k}
        for i, j, m, k in segment_couplings(L, max(listed, 1e-12))
    ] if len(L) else []


def report_json(report: dict[str, Any]) -> str:
    return json.dumps(report, indent=2, allow_nan=False) + "\n"


def _table(headers: list[str], rows: list[list[str]], right: set[int] | None = None) -> list[str]:
    """An aligned text table; columns in ``right`` are right-aligned."""
    right = right or set()
    widths = [max([len(h)] + [len(r[c]) for r in rows]) for c, h in enumerate(headers)]

    def line(cells: list[str]) -> str:
        return "  ".join(
            cell.rjust(widths[c]) if c in right else cell.ljust(widths[c]) for c, cell in enumerate(cells)
        ).rstrip()

    return [line(headers), line(["-" * w for w in widths])] + [line(r) for r in rows]


def report_text(report: dict[str, Any], max_couplings: int = 20, top_terms: int = 5) -> str:
    """The report as aligned text tables for a person. After the loop table, each
    loop's ``top_terms`` largest segment and pair terms (what to move first)."""
    from parasite.loops import format_loop_contributors, format_loop_table

    out: list[str] = [f"parasite report: {report['netlist']} + {report['routes']}", ""]
    segs = report["segments"]
    nets: dict[str, list[dict[str, Any]]] = {}
    for s in segs:
        nets.setdefault(s["net"], []).append(s)
    out.append(f"Nets with copper: {len(nets)}")
    out += _table(
        ["net", "segments", "length mm", "L sum nH"],
        [[n, str(len(v)), f"{1e3 * sum(s['length'] for s in v):.2f}",
          f"{1e9 * sum(s['inductance'] for s in v):.3f}"] for n, v in nets.items()],
        right={1, 2, 3},
    )
    out += ["", f"Segments: {len(segs)}"]
    out += _table(
        ["id", "kind", "layer", "from", "to", "length mm", "width mm", "L nH", "R mohm", "where"],
        [[s["id"], s["kind"], str(s["layer"] or "-"), s["from"], s["to"], f"{1e3 * s['length']:.3f}",
          f"{1e3 * s['width']:.3f}", f"{1e9 * s['inductance']:.4f}", f"{1e3 * s['resistance']:.4f}",
          s["name"] or s["source"]] for s in segs],
        right={5, 6, 7, 8},
    )
    cpl = sorted(report["couplings"], key=lambda c: -abs(c["k"]))
    out += ["", f"Couplings between segments with |k| >= {report['summary']['min_coupling']:g}: "
            f"{len(cpl)}" + (f" (strongest {max_couplings} shown)" if len(cpl) > max_couplings else "")]
    if cpl:
        out += _table(["a", "b", "M nH", "k"],
                      [[c["a"], c["b"], f"{1e9 * c['mutual']:.4f}", f"{c['k']:+.4f}"]
                       for c in cpl[:max_couplings]], right={2, 3})
    if report["loops"]:
        out += ["", "Loops:", format_loop_table(report["loops"]).rstrip("\n")]
        where = {s["id"]: s["name"] or s["source"] for s in segs}
        out += ["", "Largest terms of each loop, by magnitude, signed (a negative term is copper "
                "that cancels the loop's field; segment terms add up to the loop inductance; "
                "pair terms are the mutual parts of the same value):", ""]
        out.append(format_loop_contributors(report["loops"], top=top_terms, where=where).rstrip("\n"))
    if report.get("probes"):
        from parasite.probes import format_probe_table

        out += ["", f"Probes: {len(report['probes'])}"] + format_probe_table(report["probes"])
    out += loop_coupling_text(report)
    out += inductance_text(report)
    sm = report["summary"]
    out += ["", "Summary:"]
    out += [f"  {k}: {v}" for k, v in sm.items()]
    out += ["", f"Warnings: {len(report['warnings'])}"] + [f"  {w}" for w in report["warnings"]]
    out += ["", report["caution"]]
    return "\n".join(out) + "\n"


def inductance_text(report: dict[str, Any]) -> list[str]:
    """Text lines of the fast path's ``inductance`` section (none on the dense path):
    how the inductance was held and solved, and what the report leaves out and why."""
    ind = report.get("inductance")
    if not ind:
        return []
    out = ["", f"Inductance: fast operator (exact near field, {ind['near_pairs']:,} near pairs; "
           f"far field: {ind['far_field']}, multipole eps {ind['far_field_eps']:g}); "
           f"loops by GMRES to a "
           f"relative residual of {ind['gmres_rtol']:g} (iterations per loop in the JSON report)"]
    out += ["Left out on the fast path:"]
    out += [f"  {e['what']}: {e['why']}" for e in ind["left_out"]]
    return out


LOOP_SECTIONS = ("loop_pairs", "mutual_limits", "pickup", "dipoles")
CSV_TABLES = ("segments", "couplings", "loops") + LOOP_SECTIONS
_CSV_FIELDS = {
    "loop_pairs": ["a", "b", "mutual", "k", "shared", "flux", "quadrature"],
    "mutual_limits": ["loop", "other", "mutual", "limit", "within_limit", "line", "key"],
    "pickup": ["victim", "aggressor", "didt", "mutual", "voltage"],
    "dipoles": ["loop", "magnitude", "moment_x", "moment_y", "moment_z", "moment_with_images",
                "closed", "size", "frequency", "distance", "e_field", "e_field_dbuv", "far_field",
                "small_loop"],
}


def add_loop_sections(report: dict[str, Any], sections: dict[str, list[dict[str, Any]]]) -> None:
    """Put the loop-coupling sections (:func:`parasite.field.loop_report.loop_sections`)
    into ``report``, with ``summary.mutual_over_limit``."""
    for key in LOOP_SECTIONS:
        report[key] = sections.get(key, [])
    report["summary"]["mutual_over_limit"] = sum(
        1 for e in report["mutual_limits"] if not e["within_limit"])


def loop_coupling_text(report: dict[str, Any]) -> list[str]:
    """Text lines of the loop-coupling sections: the mutual (nH) and k matrices,
    shared and flux parts, limits, pick-up and dipole estimates."""
    from parasite.units import engineering

    pairs = report.get("loop_pairs") or []
    out: list[str] = []
    if pairs:
        names = [lp["name"] for lp in report["loops"]]
        own = {lp["name"]: lp.get("copper_inductance", lp["inductance"]) for lp in report["loops"]}
        by = {(p["a"], p["b"]): p for p in pairs} | {(p["b"], p["a"]): p for p in pairs}
        out += ["", "Mutual inductance between loops, nH (copper only; diagonal: the loop's "
                "copper inductance):"]
        out += _table(["loop"] + names, [[a] + [f"{1e9 * (own[a] if a == b else by[(a, b)]['mutual']):.4f}"
                                                for b in names] for a in names],
                      right=set(range(1, len(names) + 1)))
        out += ["", "Loop pairs (shared: copper both loops carry; flux: the rest):"]
        out += _table(["a", "b", "M nH", "k", "shared nH", "flux nH"],
                      [[p["a"], p["b"], f"{1e9 * p['mutual']:.4f}",
                        "-" if p["k"] is None else f"{p['k']:+.4f}", f"{1e9 * p['shared']:.4f}",
                        f"{1e9 * p['flux']:.4f}"] for p in pairs], right={2, 3, 4, 5})
    limits = report.get("mutual_limits") or []
    if limits:
        out += ["", "Mutual limits:"]
        out += _table(["loop", "other", "|M|", "limit", "status"],
                      [[e["loop"], e["other"], engineering(abs(e["mutual"]), "H"),
                        engineering(e["limit"], "H"), "ok" if e["within_limit"] else "OVER"]
                       for e in limits], right={2, 3})
    pick = report.get("pickup") or []
    if pick:
        out += ["", "Victim pick-up, v = M di/dt (open victim loop):"]
        out += _table(["victim", "aggressor", "di/dt A/ns", "M nH", "v"],
                      [[e["victim"], e["aggressor"], f"{1e-9 * e['didt']:.4g}",
                        f"{1e9 * e['mutual']:.4f}", engineering(e["voltage"], "V")] for e in pick],
                      right={2, 3, 4})
    dip = report.get("dipoles") or []
    if dip:
        out += ["", f"Magnetic dipole moment per 1 A and radiated-field ESTIMATE ({dip[0]['note']}):"]
        out += _table(["loop", "|m| mm2", "with images mm2", "closed", "f", "distance m", "E dBuV/m"],
                      [[d["loop"], f"{1e6 * d['magnitude']:.2f}", f"{1e6 * d['moment_with_images']:.2f}",
                        "yes" if d["closed"] else "no", engineering(d["frequency"], "Hz"),
                        f"{d['distance']:g}",
                        "-" if d["e_field_dbuv"] is None else f"{d['e_field_dbuv']:.1f}"] for d in dip],
                      right={1, 2, 4, 5, 6})
    return out


def report_csv(report: dict[str, Any], table: str = "segments") -> str:
    """One table of the report as CSV (SI units, header row first)."""
    buf = io.StringIO()
    if table not in report and table in LOOP_SECTIONS:
        rows = []
    else:
        rows = report[table]
    if table == "loops":
        rows = [{k: v for k, v in r.items() if not isinstance(v, list | dict)} for r in rows]
    if table == "dipoles":
        rows = [{k: v for k, v in r.items() if k not in ("moment", "note")}
                | {f"moment_{c}": r["moment"][n] for n, c in enumerate("xyz")} for r in rows]
    if table in _CSV_FIELDS:
        fields = _CSV_FIELDS[table]
        writer = csv.DictWriter(buf, fieldnames=fields, lineterminator="\n", extrasaction="ignore")
        writer.writeheader()
        for r in rows:
            writer.writerow({k: ("" if r.get(k) is None else r.get(k)) for k in fields})
        return buf.getvalue()
    fields = list(rows[0].keys()) if rows else {
        "segments": ["id", "net", "kind", "layer", "from", "to", "length", "width", "thickness",
                     "inductance", "resistance", "source", "name"],
        "couplings": ["a", "b", "mutual", "k"],
        "loops": ["name", "inductance", "resistance", "frequency", "limit", "within_limit"],
    }[table]
    writer = csv.DictWriter(buf, fieldnames=fields, lineterminator="\n")
    writer.writeheader()
    for r in rows:
        writer.writerow({k: ("" if r.get(k) is None else r.get(k)) for k in fields})
    return buf.getvalue()


def format_report(report: dict[str, Any], fmt: str = "text", table: str = "segments") -> str:
    """The report as ``parasite report --format`` writes it: ``json``, ``csv``
    (one ``table``) or ``text``."""
    if fmt == "json":
        return report_json(report)
    if fmt == "csv":
        return report_csv(report, table)
    if fmt == "text":
        return report_text(report)
    raise ValueError(f"unknown report format {fmt!r}: json, text or csv")
