"""The ``parasite ring`` report as aligned text, and as JSON (same data)."""

from __future__ import annotations

import json
from typing import Any

_METRIC_ROWS = [
    # key, label, scale, unit, digits
    ("frequency", "ring frequency", 1e-6, "MHz", 2),
    ("damping_ratio", "damping ratio", 1.0, "", 3),
    ("overshoot", "peak overshoot", 1.0, "V", 2),
    ("overshoot_ratio", "overshoot / step", 100.0, "%", 1),
    ("settling_time", "settling time", 1e9, "ns", 1),
    ("ring_amplitude", "ring amplitude", 1.0, "V", 2),
    ("step", "step", 1.0, "V", 2),
]


def ring_json(report: dict[str, Any]) -> str:
    """The report as JSON text (sorted keys off: the order is the document's)."""
    return json.dumps(report, indent=2, allow_nan=False) + "\n"


def _num(x: float | None, scale: float = 1.0, digits: int = 3) -> str:
    if x is None:
        return "-"
    return f"{x * scale:.{digits}f}"


def _table(header: list[str], rows: list[list[str]], right: set[int]) -> list[str]:
    widths = [max(len(r[i]) for r in [header, *rows]) for i in range(len(header))]

    def fmt(r: list[str]) -> str:
        cells = [c.rjust(w) if i in right else c.ljust(w) for i, (c, w) in
                 enumerate(zip(r, widths, strict=True))]
        return "  ".join(cells).rstrip()

    return [fmt(header), *(fmt(r) for r in rows)]


def _edge_rows(source: str, edges: list[dict[str, Any]], all_edges: bool,
               notes: list[str]) -> list[list[str]]:
    """Table rows of one waveform's edges; a metric that could not be measured
    shows a note number, and ``notes`` gets the reason."""
    picked = list(enumerate(edges, 1))
    if not all_edges:
        last: dict[str, tuple[int, dict[str, Any]]] = {}
        for i, e in picked:
            last[e["direction"]] = (i, e)
        picked = sorted(last.values(), key=lambda p: p[0])
    rows = []
    for i, e in picked:
        ring_note = settle_note = ""
        if e["frequency"] is None and e.get("ring_reason"):
            notes.append(f"{source} edge {i}, ring: {e['ring_reason']}")
            ring_note = f"-  [{len(notes)}]"
        if e["settling_time"] is None and e.get("settling_reason"):
            notes.append(f"{source} edge {i}, settling: {e['settling_reason']}")
            settle_note = f"-  [{len(notes)}]"
        amp = e.get("ring_amplitude")
        rows.append([
            source, str(i), e["direction"], _num(e["edge_time"], 1e6, 4),
            ring_note or _num(e["frequency"], 1e-6, 2),
            ring_note or _num(e["damping_ratio"], 1.0, 3),
            ring_note or _num(amp, 1.0, 2),
            _num(e["overshoot"], 1.0, 2),
            settle_note or _num(e["settling_time"], 1e9, 1),
        ])
    return rows


def format_ring_text(report: dict[str, Any], *, all_edges: bool = False) -> str:
    """Aligned tables: the edges of each waveform, the measured-against-simulated
    comparison, and the loop fit."""
    band = 100 * report["settling_band_fraction"]
    out = [f"Ringing at node {report['node']}"]
    where = report.get("read_at")
    if where:
        out.append(f"(read at {where})")
    out.append(f"Settling: the time from the edge's 50 % crossing until the waveform stays "
               f"within +-{band:g} % of the step around the final level; ring: a damped "
               "sinusoid fitted after the first lobe (docs/ring.md).")
    header = ["waveform", "edge", "direction", "time (us)", "ring (MHz)", "damping",
              "ring amp. (V)", "overshoot (V)", "settling (ns)"]
    rows: list[list[str]] = []
    notes: list[str] = []
    sims = report["simulations"]
    probe = (report.get("probe") or {}).get("name")
    for key in ("ideal", "augmented"):
        if key in sims:
            label = f"probe {probe}" if key == "augmented" and probe else key
            rows += _edge_rows(label, sims[key]["edges"], all_edges, notes)
    if report.get("measured"):
        rows += _edge_rows("measured", report["measured"]["edges"], True, notes)
    out += [""] + _table(header, rows, right={1, 3, 4, 5, 6, 7, 8})
    out += [f"  [{k}] {n}" for k, n in enumerate(notes, 1)]
    if not all_edges:
        counts = ", ".join(
            f"{f'probe {probe} reading' if k == 'augmented' and probe else k} {len(v['edges'])}"
            for k, v in sims.items())
        out.append(f"(edges found: {counts}; the last of each direction shown, all of them "
                   "with --all-edges or --format json)")
    for comp in report.get("comparison", []):
        offset = comp["time_offset"]
        shift = "" if offset is None else f", shifted by {offset * 1e6:+.4f} us to line up"
        sims_of = []
        for key in ("augmented", "ideal"):
            k = comp.get(f"{key}_edge")
            sims_of.append(f"{key} edge {k}" if k is not None else f"no {key} edge")
        rule = report.get("pairing", "order")
        out += ["", f"Measured edge {comp['measured_edge']} ({comp['direction']}) against "
                    f"{' and '.join(sims_of)} (pairing: {rule}){shift}:"]
        crows = []
        for key, label, scale, unit, digits in _METRIC_ROWS:
            r = comp["metrics"][key]
            diff = _num(r["difference"], scale, digits)
            if r["difference"] is not None and not diff.startswith("-"):
                diff = "+" + diff
            rel = r["relative_difference"]
            crows.append([
                label + (f" ({unit})" if unit else ""),
                _num(r["ideal"], scale, digits), _num(r["augmented"], scale, digits),
                _num(r["measured"], scale, digits), diff,
                "-" if rel is None else f"{100 * rel:+.1f} %",
            ])
        out += _table(["metric", "ideal", "augmented", "measured", "augm. - meas.", "relative"],
                      crows, right={1, 2, 3, 4, 5})
    fits = report.get("fit", [])
    if fits:
        loop = report.get("loop")
        out += ["", "Series RLC loop that rings this way (L = 1/(w0^2 C), R = 2 zeta w0 L):"]
        frows = []
        for f in fits:
            src = f["capacitance_from"]
            cfrom = "given" if src == "given" else " + ".join(
                f"{d['device']} at {d['voltage']:.1f} V" for d in src)
            diff = f["inductance_difference"]
            frows.append([
                f["source"], f["direction"], _num(f["frequency"], 1e-6, 2),
                _num(f["damping_ratio"], 1.0, 3), _num(f["capacitance"], 1e12, 0) + " pF",
                cfrom, _num(f["inductance"], 1e9, 2), _num(f["resistance"], 1e3, 1),
                "-" if diff is None else f"{100 * diff:+.1f} %",
            ])
        lname = f"vs loop {loop['name']!r}" if loop else "vs loop"
        out += _table(["ring of", "edge", "ring (MHz)", "damping", "C", "C from", "L (nH)",
                       "R (mOhm)", lname], frows, right={2, 3, 4, 6, 7, 8})
        if loop:
            out.append(f"(loop {loop['name']!r} from the routes file: "
                       f"L = {loop['inductance'] * 1e9:.2f} nH, "
                       f"R = {loop['resistance'] * 1e3:.2f} mOhm)")
    pick = report.get("pickup") or []
    if pick:
        out += ["", f"Pick-up of the other loops from loop {pick[0]['aggressor']!r}'s simulated "
                f"current (v = M di/dt, current read in {pick[0]['branch']}; docs/field.md):"]
        out += _table(["victim", "M (nH)", "peak v (V)", "at (us)", "di/dt (A/ns)"],
                      [[e["victim"], _num(e["mutual"], 1e9, 3), _num(e["peak_voltage"], 1.0, 4),
                        _num(e["time"], 1e6, 4), _num(e["peak_didt"], 1e-9, 4)] for e in pick],
                      right={1, 2, 3, 4})
    from parasite.ring.budget import budget_lines

    out += budget_lines(report.get("damping_budget", []), report.get("copper_model", "DC resistance"))
    out += [""] + [f"Caution: {c}" for c in report["cautions"]]
    return "\n".join(out) + "\n"
