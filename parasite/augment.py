"""The augmented netlist: the extracted copper wired into the designer's netlist.

Every element terminal that a pin places moves to a new node at its point of
the copper; each net's anchor keeps the original node name. Every branch (a
merged series chain of segments, or one segment with ``keep_segments``) becomes

    R<name>  <mid>   <to>    R       (series resistance)
    L<name>  <from>  <mid>   L       (partial self inductance)

Dot convention: the inductor's first node is the branch's ``from`` end, so a
positive current in SPICE's sense (into the first node) is a current in the
geometric direction of the branch, and the coupling statement
``K<name> L<a> L<b> k`` carries the sign of the partial mutual inductance of
the two branches in those directions (k = M / sqrt(La Lb)).

The original lines are untouched except for the node tokens of placed
terminals; the new cards go after the last top-level element, before the first
analysis or output card (:mod:`parasite.netlist.placement`).
"""

from __future__ import annotations

import copy
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from parasite import probes
from parasite.branches import Branch, branch_matrices, build_branches, conducting_segments
from parasite.naming import NameAllocator, sanitize
from parasite.pipeline import Extraction


@dataclass(frozen=True)
class AugmentOptions:
    min_coupling: float | None = None  # None: chosen per board (parasite.threshold)
    keep_segments: bool = False
    loop_tolerance: float = 0.01  # with min_coupling None: largest change of a loop's L


@dataclass(frozen=True)
class AugmentResult:
    netlist_bytes: bytes
    report: dict[str, Any]
    node_names: dict[int, str]  # graph node id -> netlist node name
    branches: list[Branch] = field(default_factory=list)
    inductor_names: list[str] = field(default_factory=list)  # per branch


def _fmt(x: float) -> str:
    """A number as written into the netlist: 10 significant digits, exponent form."""
    return f"{x:.10e}"


def node_names(extraction: Extraction, allocator: NameAllocator) -> dict[int, str]:
    """A netlist node name for every node of the copper graph: the anchor keeps
    its net's name, the others are ``<net>_<n>`` in node order."""
    graph = extraction.inputs.graph
    names: dict[int, str] = {}
    for net, anchor in graph.anchors.items():
        names[anchor] = allocator.take(net)
    names.update(probes.end_node_names(graph, allocator))  # probe_<name>_tip / _gnd
    counters: dict[str, int] = {}
    for gnode in graph.nodes:
        if gnode.id in names:
            continue
        base = sanitize(gnode.net)
        if not base[0].isalpha():
            base = "n" + base
        counters[gnode.net] = counters.get(gnode.net, 0) + 1
        names[gnode.id] = allocator.new(f"{base}_{counters[gnode.net]}")
    return names


def _point_mm(p: tuple[float, float, float]) -> str:
    return "(" + ", ".join(f"{1e3 * c:.3f}" for c in p) + ") mm"


def augment(extraction: Extraction, options: AugmentOptions | None = None) -> AugmentResult:
    """Build the augmented netlist and the JSON report of one run."""
    from parasite.extract import choose_couplings
    from parasite.extract.couplings import written_matrix
    from parasite.report import build_report
    from parasite.threshold import FALLBACK, ThresholdChoice, choose_threshold

    options = options or AugmentOptions()
    inputs = extraction.inputs
    graph = inputs.graph
    netlist = copy.deepcopy(inputs.netlist)  # the caller's netlist stays as read
    if not graph.segments:
        report = build_report(extraction, options, None)
        return AugmentResult(netlist.to_bytes(), report, {})

    allocator = NameAllocator(netlist.node_names())
    names = node_names(extraction, allocator)

    keep_nodes = {p.node for p in graph.pins} | set(graph.anchors.values())
    keep_nodes |= {pl.node for pl in graph.planes}
    keep_nodes |= probes.kept_nodes(graph)
    mask = conducting_segments(graph, keep_nodes)
    branches = build_branches(graph, mask, keep_nodes, merge=not options.keep_segments)

    elements = NameAllocator(netlist.element_names())
    selection = None
    choice = ThresholdChoice(FALLBACK if options.min_coupling is None else options.min_coupling,
                             "no copper carries current", {})
    cards: list[str] = []
    inductor_names: list[str] = []
    if branches:
        Lb, Rb = branch_matrices(branches, extraction.L, extraction.R)
        leads = probes.lead_branches(graph, branches)
        selections: dict[float, Any] = {}

        def select(thr: float) -> Any:
            if thr not in selections:
                selections[thr] = (probes.select_couplings(Lb, thr, leads) if leads.any()
                                   else choose_couplings(Lb, thr))
            return selections[thr]

        def written(thr: float) -> np.ndarray:
            sel = select(thr)
            return written_matrix(sel.self_inductance, sel.i, sel.j, sel.k)

        if options.min_coupling is None:
            choice = choose_threshold(graph, inputs.netlist, branches, Lb, Rb, written,
                                      tolerance=options.loop_tolerance)
        else:
            choice = ThresholdChoice(options.min_coupling, "given (--min-coupling)", {})
        selection = select(choice.min_coupling)
        cards += _branch_cards(extraction, branches, Rb, selection.self_inductance, names,
                               allocator, elements, inductor_names)
        cards += _coupling_cards(selection, inductor_names, elements)
    cards += probes.instrument_cards(graph, names, elements, netlist.to_bytes())
    report = build_report(extraction, options, selection, branches=branches, node_names=names,
                          threshold=choice)
    report["warnings"] += initial_current_warnings(netlist, set(graph.anchors))
    for pin in graph.pins:  # after the report: loops resolve terminals on the original netlist
        if pin.node != graph.anchors.get(pin.net):
            netlist.rename_terminal(pin.pin.element, pin.pin.term, names[pin.node])
    header = _header(extraction, report, branches, selection, names, mask)
    netlist.append_cards(header + cards + ["* ---- end of parasite copper ----"])
    return AugmentResult(netlist.to_bytes(), report, names, branches, inductor_names)


_IC = re.compile(r"(?:^|[\s,])ic\s*=\s*([^\s,)]+)", re.IGNORECASE)


def initial_current_warnings(netlist: Any, copper_nets: set[str]) -> list[str]:
    """Inductor elements that start with a current (``ic=``) on a net that now
    has copper: under ``uic`` the copper's inductors start at 0 A, so the initial
    currents disagree and the first nanoseconds of a transient are not physical."""
    out = []
    for el in netlist.elements:
        if el.letter != "L" or not copper_nets.intersection(el.nodes):
            continue
        m = _IC.search(netlist.card_text(el.name))
        if m and m.group(1).strip("{}") not in ("0", "0.0"):
            nets = ", ".join(sorted(copper_nets.intersection(el.nodes)))
            out.append(f"{el.name} starts with ic={m.group(1)} on net {nets}, which has copper: under uic "
                       "the copper's inductors start at 0 A, so the start of a transient is not "
                       "consistent; start from 0 A (e.g. ramp a current source) or from an operating point")
    return out


def _header(extraction: Extraction, report: dict[str, Any], branches: list[Branch],
            selection: Any, names: dict[int, str], mask: np.ndarray) -> list[str]:
    inputs = extraction.inputs
    summary = report["summary"]
    freq = extraction.frequency
    used_nodes = {b.node_from for b in branches} | {b.node_to for b in branches}
    anchors = set(inputs.graph.anchors.values())
    lines = [
        f"* ---- parasite: copper from {Path(inputs.routes_path).name} ----",
        f"* {int(mask.sum())} segments in {len(branches)} branches "
        f"({len(inputs.graph.segments) - int(mask.sum())} segments carry no current and are left out)",
        f"* {summary['couplings_written']} coupling statements with |k| >= "
        f"{summary['min_coupling']:g}, {summary['couplings_dropped']} weaker dropped "
        f"({selection.method if selection else 'none'}; threshold {summary['min_coupling_rule'] or 'given'})",
        f"* {len(used_nodes - anchors)} new nodes; resistance "
        + ("at DC" if freq is None else f"at {freq:g} Hz (skin effect estimate)"),
        "* smallest eigenvalue of the inductance matrix as written: "
        + ("-" if summary["min_eigenvalue"] is None else f"{summary['min_eigenvalue']:.4e} H"),
        "* partial inductances from closed-form formulas: estimates, to be confirmed by measurement",
    ]
    if selection is not None and selection.note:
        lines.append(f"* {selection.note}")
    if selection is not None and selection.dropped:
        # the dropped pairs are meant to be 0: keep ngspice's positive-definite check of every
        # coupled group, but not its listing of each missing pair (ngspice's indverbosity option)
        lines.append(".options indverbosity=1")
    if any(b.node_from == b.node_to for b in branches):
        lines.append("* note: closed rings of copper are written as a branch from a node to itself")
    return lines


def _branch_cards(extraction: Extraction, branches: list[Branch], Rb: np.ndarray,
                  Lself: np.ndarray, names: dict[int, str], nodes: NameAllocator,
                  elements: NameAllocator, inductor_names: list[str]) -> list[str]:
    graph = extraction.inputs.graph
    cards: list[str] = []
    per_net: dict[str, int] = {}
    for b, br in enumerate(branches):
        first, last = graph.segments[br.segments[0]], graph.segments[br.segments[-1]]
        net = sanitize(first.net)
        per_net[net] = per_net.get(net, 0) + 1
        tag = f"p_{net}_{per_net[net]}"
        lname, rname = elements.new("L" + tag), elements.new("R" + tag)
        mid = nodes.new(f"{'n' if not net[0].isalpha() else ''}{net}_{per_net[net]}_m")
        ids = first.id if len(br.segments) == 1 else f"{first.id}..{last.id}"
        where = first.name or first.source
        start = first.start if br.signs[0] == 1 else first.end
        end = last.end if br.signs[-1] == 1 else last.start
        cards.append(f"* {ids}: {first.kind} {where}, {len(br.segments)} segment(s) "
                     f"from {_point_mm(start)} to {_point_mm(end)}")
        cards.append(f"{lname} {names[br.node_from]} {mid} {_fmt(float(Lself[b]))}")
        cards.append(f"{rname} {mid} {names[br.node_to]} {_fmt(float(Rb[b]))}")
        inductor_names.append(lname)
    return cards


def _coupling_cards(selection: Any, inductor_names: list[str],
                    elements: NameAllocator) -> list[str]:
    from parasite.extract import format_k

    cards = []
    for n, (i, j, k) in enumerate(zip(selection.i.tolist(), selection.j.tolist(),
                                      selection.k.tolist(), strict=True), start=1):
        kname = elements.new(f"Kp_{n}")
        cards.append(f"{kname} {inductor_names[i]} {inductor_names[j]} {format_k(k)}")
    return cards


def augment_files(netlist_path: str, routes_path: str, *, min_coupling: float | None = None,
                  frequency: float | None = None, keep_segments: bool = False,
                  progress: Any = None) -> AugmentResult:
    """Read, extract and augment in one call (the library side of ``parasite augment``)."""
    from parasite.pipeline import extract, load_inputs

    inputs = load_inputs(netlist_path, routes_path)
    extraction = extract(inputs, frequency=frequency, progress=progress)
    options = AugmentOptions(min_coupling=min_coupling, keep_segments=keep_segments)
    return augment(extraction, options)
