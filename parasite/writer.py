"""The augmented netlist: the copper network wired into the designer's netlist.

Every element terminal that a pin places moves to a new node at its point of
the copper; each net's anchor keeps the original node name. Every branch of
the :class:`parasite.network.Network` (a merged series chain of segments, or
one segment with ``keep_segments``) becomes

    R<name>  <mid>   <to>    R       (series resistance)
    L<name>  <from>  <mid>   L       (partial self inductance)

Dot convention: the inductor's first node is the branch's ``from`` end, so a
positive current in SPICE's sense (into the first node) is a current in the
geometric direction of the branch, and the coupling statement
``K<name> L<a> L<b> k`` carries the sign of the partial mutual inductance of
the two branches in those directions (k = M / sqrt(La Lb)).

A probe's instrument input (R in parallel with C, behind its damping
resistance) goes between its lead ends, with a ``.save`` card for the
reading's nodes. The original lines are untouched except for the node tokens
of placed terminals; the new cards are appended by
:meth:`parasite.netlist.Netlist.append_cards`.
"""

from __future__ import annotations

import copy
import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from parasite.naming import NameAllocator, sanitize
from parasite.network import Network
from parasite.network.couplings import format_k
from parasite.network.names import reading_plus
from parasite.network.ports import probe_nodes

if TYPE_CHECKING:
    from geometry.model import CopperGraph
    from parasite.network.ladders import BranchLadders


@dataclass(frozen=True)
class WrittenNetlist:
    netlist_bytes: bytes
    inductor_names: list[str]  # per branch of the network


def write_netlist(network: Network, ladders: BranchLadders | None = None,
                  reduction: Any = None) -> WrittenNetlist:
    """The augmented netlist of ``network`` (the caller's netlist stays as read); with
    ``ladders`` every branch is its broadband R-L ladder (:mod:`parasite.network.ladders`);
    with ``reduction`` (a :class:`parasite.network.reduce_choice.Reduction`) the copper is
    written as its reduced model, a subcircuit at the ports."""
    graph = network.graph
    netlist = copy.deepcopy(network.extraction.inputs.netlist)
    nodes = NameAllocator(network.reserved_names)
    elements = NameAllocator(netlist.element_names())
    if not graph.segments:
        parts = part_cards(graph.routes, netlist, nodes, elements)
        if parts:
            netlist.append_cards(parts + ["* ---- end of parasite parts ----"])
        return WrittenNetlist(netlist.to_bytes(), [])
    names = network.node_names
    cards: list[str] = []
    inductor_names: list[str] = []
    if network.branches and reduction is not None:
        cards += _reduced_cards(network, reduction, elements)
    elif network.branches and network.selection is not None:
        if ladders is None:
            cards += _branch_cards(network, network.selection.self_inductance, nodes, elements,
                                   inductor_names)
        else:
            cards += _ladder_branch_cards(network, ladders, nodes, elements, inductor_names)
        cards += _coupling_cards(network.selection, inductor_names, elements,
                                 None if ladders is None else ladders.k)
    cards += instrument_cards(graph, names, elements, netlist.to_bytes())
    for pin in graph.pins:
        if pin.node != graph.anchors.get(pin.net):
            netlist.rename_terminal(pin.pin.element, pin.pin.term, names[pin.node])
    cards += part_cards(graph.routes, netlist, nodes, elements)
    if reduction is not None:
        header = _reduced_header(network, reduction)
    else:
        header = _header(network) + ([] if ladders is None else ladders.header_lines())
    netlist.append_cards(header + cards + ["* ---- end of parasite copper ----"])
    return WrittenNetlist(netlist.to_bytes(), inductor_names)


def part_cards(routes: Any, netlist: Any, nodes: NameAllocator,
               elements: NameAllocator) -> list[str]:
    """The parts' own inductances (``[[part]]``): the terminal moves to a new
    node and an inductor joins it to the node it was on (after the pins have
    placed it on the copper), so the part's inductance is in series at that
    terminal. Raises :class:`geometry.errors.RoutesError` for a terminal the
    netlist does not have."""
    from geometry.errors import RoutesError
    from parasite.errors import NetlistError

    cards: list[str] = []
    for part in routes.parts:
        try:
            node = netlist.terminal_node(part.element, part.term)
        except NetlistError as exc:  # unknown element or terminal: the routes file's place
            raise RoutesError(f"part terminal {part.terminal!r}: {exc.message}", file=routes.path,
                              line=part.line, key=f"part[{part.index}].terminal") from None
        tag = sanitize(f"{part.element}_{part.term}")
        new = nodes.new(f"part_{tag}")
        netlist.rename_terminal(part.element, part.term, new)
        if not cards:
            cards.append("* parts' own inductance ([[part]]): datasheet or estimated values, "
                         "which depend on mounting")
        cards.append(f"{elements.new('Lpart_' + tag)} {new} {node} {_fmt(part.inductance)}")
    return cards


def _fmt(x: float) -> str:
    """A number as written into the netlist: 10 significant digits, exponent form."""
    return f"{x:.10e}"


def _point_mm(p: tuple[float, float, float]) -> str:
    return "(" + ", ".join(f"{1e3 * c:.3f}" for c in p) + ") mm"


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


def _header(network: Network) -> list[str]:
    extraction, branches, selection = network.extraction, network.branches, network.selection
    mask = network.conducting
    inputs = extraction.inputs
    freq = extraction.frequency
    rule = network.threshold.rule if network.threshold is not None else ""
    lam = selection.min_eigenvalue if selection is not None else None
    lam = lam if lam is not None and math.isfinite(lam) else None
    used_nodes = {b.node_from for b in branches} | {b.node_to for b in branches}
    anchors = set(inputs.graph.anchors.values())
    lines = [
        f"* ---- parasite: copper from {Path(inputs.routes_path).name} ----",
        f"* {int(mask.sum())} segments in {len(branches)} branches "
        f"({len(inputs.graph.segments) - int(mask.sum())} segments carry no current and are left out)",
        f"* {int(selection.kept) if selection is not None else 0} coupling statements with |k| >= "
        f"{network.min_coupling:g}, {int(selection.dropped) if selection is not None else 0} weaker "
        f"dropped ({selection.method if selection else 'none'}; threshold {rule or 'given'})",
        f"* {len(used_nodes - anchors)} new nodes; resistance "
        + ("at DC" if freq is None else f"at {freq:g} Hz (skin effect estimate)"),
        "* smallest eigenvalue of the inductance matrix as written: "
        + ("-" if lam is None else f"{lam:.4e} H"),
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


def _reduced_header(network: Network, reduction: Any) -> list[str]:
    m, r = reduction.model, reduction.realisation
    inputs = network.extraction.inputs
    freq = network.extraction.frequency
    return [
        f"* ---- parasite: copper from {Path(inputs.routes_path).name}, reduced model ----",
        f"* {len(network.branches)} branches seen from {m.n_ports} ports, reduced to "
        f"{m.order} internal states of {m.full_order} ({reduction.method})",
        f"* port impedance within {r.max_error:.2e} (complex relative error) of the full "
        f"network from DC to {m.f_max:g} Hz"
        + (f" ({reduction.checked})" if reduction.checked else "") + "; resistance "
        + ("at DC" if freq is None else f"at {freq:g} Hz (skin effect estimate)"),
        f"* smallest eigenvalue of the inductance matrix as written: {r.min_eig_L:.4e} H",
        "* partial inductances from closed-form formulas: estimates, to be confirmed by measurement",
    ]


def _reduced_cards(network: Network, reduction: Any, elements: NameAllocator) -> list[str]:
    from parasite.network.reduce_cards import subcircuit_cards

    subckts = set(network.extraction.inputs.netlist.subckts)  # lower-case names
    name, n = "parasite_copper", 1
    while name in subckts:
        n += 1
        name = f"parasite_copper{n}"
    return subcircuit_cards(reduction.model, reduction.realisation, name, network.node_names,
                            elements.new("Xparasite_copper"))


def _branch_cards(network: Network, Lself: np.ndarray, nodes: NameAllocator,
                  elements: NameAllocator, inductor_names: list[str]) -> list[str]:
    graph, branches, Rb, names = network.graph, network.branches, network.R, network.node_names
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


def _ladder_branch_cards(network: Network, ladders: BranchLadders, nodes: NameAllocator,
                         elements: NameAllocator, inductor_names: list[str]) -> list[str]:
    """Every branch as its ladder (:func:`parasite.extract.ladder.ladder_cards`); the
    inductor listed per branch is the ladder's L0, which carries the couplings."""
    from parasite.extract.ladder import ladder_cards

    graph, names = network.graph, network.node_names
    cards: list[str] = []
    per_net: dict[str, int] = {}
    for br, lad in zip(network.branches, ladders.ladders, strict=True):
        first = graph.segments[br.segments[0]]
        net = sanitize(first.net)
        per_net[net] = per_net.get(net, 0) + 1
        tag = f"p_{net}_{per_net[net]}"
        stem = f"{'n' if not net[0].isalpha() else ''}{net}_{per_net[net]}"
        count = iter(range(1, 1000))

        def new_name(kind: str, tag: str = tag, stem: str = stem, count: Any = count) -> str:
            if kind == "node":
                return nodes.new(f"{stem}_b{next(count)}")
            return elements.new(f"{kind}{tag}_{next(count)}")

        cards.append(f"* {first.id}: {len(br.segments)} segment(s), ladder of {lad.r.size} stages "
                     f"(fit error {100 * lad.max_error_r:.2f}% R, {100 * lad.max_error_l:.2f}% L)")
        body, coupled = ladder_cards(lad, names[br.node_from], names[br.node_to], new_name)
        cards += body
        inductor_names.append(coupled)
    return cards


def _coupling_cards(selection: Any, inductor_names: list[str],
                    elements: NameAllocator, k_values: np.ndarray | None = None) -> list[str]:
    cards = []
    ks = selection.k if k_values is None else k_values
    for n, (i, j, k) in enumerate(zip(selection.i.tolist(), selection.j.tolist(),
                                      np.asarray(ks).tolist(), strict=True), start=1):
        kname = elements.new(f"Kp_{n}")
        cards.append(f"{kname} {inductor_names[i]} {inductor_names[j]} {format_k(k)}")
    return cards


_SAVE = re.compile(rb"^[ \t]*\.save\b", re.IGNORECASE | re.MULTILINE)


def has_save_card(netlist_bytes: bytes) -> bool:
    """True when the main file has a ``.save`` card (which limits what ngspice
    writes; further ``.save`` cards add to the list)."""
    return _SAVE.search(netlist_bytes) is not None


def instrument_cards(graph: CopperGraph, names: dict[int, str], elements: NameAllocator,
                     netlist_bytes: bytes) -> list[str]:
    """The instrument inputs (R in parallel with C between the lead ends, behind
    the series damping resistance where the instrument has one) and a ``.save``
    card for the reading's nodes.

    ngspice writes every node when a deck has no ``.save`` card and only the
    listed ones when it has one; ``.save`` cards add up (ngspice 39, checked by
    a run). So the card, listing the probe nodes, is written only when the main
    file has a ``.save`` of its own: without one every node is written anyway,
    and gnucap, which has no ``.save`` card and stops reading at one, can run
    the deck (a ``.save`` in an included file is not looked for)."""
    cards: list[str] = []
    saved: list[str] = []
    for pn in probe_nodes(graph):
        pr, ins = pn.probe, pn.probe.instrument
        end, minus = names[pn.tip_end], names[pn.ground_end]
        plus = reading_plus(end, ins)
        tag = sanitize(pr.name)
        what = f"preset {ins.preset!r}" if ins.preset else "given values"
        damped = f", behind {ins.damping:g} ohm in series from {end}" if ins.damping > 0 else ""
        cards.append(f"* probe {pr.name}: reading = v({plus}) - v({minus}); instrument input "
                     f"{ins.resistance:g} ohm || {ins.capacitance:g} F{damped} ({what})")
        if ins.damping > 0:
            cards.append(f"{elements.new('Rdamp_' + tag)} {end} {plus} {ins.damping:.10e}")
        cards.append(f"{elements.new('Rprobe_' + tag)} {plus} {minus} {ins.resistance:.10e}")
        cards.append(f"{elements.new('Cprobe_' + tag)} {plus} {minus} {ins.capacitance:.10e}")
        saved += [f"v({plus})", f"v({minus})"]
    if saved and has_save_card(netlist_bytes):
        cards.append(".save " + " ".join(saved))
    return cards
