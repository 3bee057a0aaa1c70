"""Ports of the copper network: where a ``[[loop]]`` of the routes file drives it,
and where a ``[[probe]]``'s leads touch it.

A loop is a closed path named by element terminals. Between consecutive
terminals of one element the path runs through that element (it carries the
loop current: the copper gives up 1 A at the first terminal's node and takes
it back at the second's); between consecutive terminals of one net it runs
through that net's copper. :func:`loop_port` turns one loop into the
segments it may use, the injection vector (per 1 A) and the node count, for
the nodal solve of :mod:`parasite.network.solve`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Protocol

import numpy as np

from geometry.errors import RoutesError
from geometry.model import CopperGraph, LoopSpec, canonical_net
from parasite.errors import ParasiteError
from parasite.network.solve import node_components

if TYPE_CHECKING:
    from geometry.model import Probe


class TerminalLookup(Protocol):
    """What a loop port needs from the netlist (``parasite.netlist.Netlist``)."""

    def terminal_index(self, element: str, terminal: str) -> int: ...

    def terminal_node(self, element: str, terminal: str) -> str: ...


@dataclass(frozen=True)
class _Stop:
    text: str  # terminal as written
    element: str
    net: str
    node: int  # graph node id, or a node past the graph's for a net without copper


def _routes_error(spec: LoopSpec, file: str, key: str, message: str) -> RoutesError:
    return RoutesError(message, file=file, line=spec.line, key=key)


def _resolve_stops(
    spec: LoopSpec, graph: CopperGraph, netlist: TerminalLookup, extra: dict[str, int]
) -> list[_Stop]:
    file = graph.routes.path
    placed: dict[tuple[str, int], int] = {}
    for pn in graph.pins:
        try:
            placed[(pn.pin.element, netlist.terminal_index(pn.pin.element, pn.pin.term))] = pn.node
        except ParasiteError:  # the pin check reports these; a loop cannot use them
            continue
    if len(spec.path) < 2:
        raise _routes_error(
            spec, file, f"loop[{spec.index}].path",
            f"loop {spec.name!r} names {len(spec.path)} terminal(s); a loop needs at least two, "
            "for example [\"C5:1\", \"M1:d\", \"M1:s\", \"C5:2\"]",
        )
    stops: list[_Stop] = []
    for j, text in enumerate(spec.path):
        key = f"loop[{spec.index}].path[{j}]"
        element, colon, term = text.partition(":")
        element, term = element.strip().lower(), term.strip().lower()
        if not colon or not element or not term:
            raise _routes_error(
                spec, file, key,
                f"{text!r} is not a terminal; write ELEMENT:TERMINAL, for example \"M1:d\" or \"C5:1\"",
            )
        try:
            index = netlist.terminal_index(element, term)
            net = netlist.terminal_node(element, term)
        except ParasiteError as exc:
            raise _routes_error(spec, file, key, f"terminal {text!r}: {exc.message}") from exc
        net = canonical_net(net)
        if (element, index) in placed:
            node = placed[(element, index)]
        elif net in graph.anchors:
            node = graph.anchors[net]
        else:  # a net without copper: one ideal node
            node = extra.setdefault(net, len(graph.nodes) + len(extra))
        stops.append(_Stop(text, element, net, node))
    return stops


def loop_port(
    spec: LoopSpec, graph: CopperGraph, netlist: TerminalLookup
) -> tuple[np.ndarray, np.ndarray, int]:
    """The segments (indices) of the nets the loop visits, the injection vector
    (per 1 A) and the number of nodes (graph nodes plus one per copper-less net)."""
    extra: dict[str, int] = {}
    stops = _resolve_stops(spec, graph, netlist, extra)
    n_nodes = len(graph.nodes) + len(extra)
    injection = np.zeros(n_nodes)
    nets: set[str] = set()
    hops: list[tuple[int, _Stop, _Stop]] = []
    through_element = False
    for j, a in enumerate(stops):
        b = stops[(j + 1) % len(stops)]
        if a.element == b.element:  # through the element: it carries the loop current
            through_element = True
            injection[a.node] -= 1.0
            injection[b.node] += 1.0
        elif a.net == b.net:
            nets.add(a.net)
            hops.append((j, a, b))
        else:
            raise _routes_error(
                spec, graph.routes.path, f"loop[{spec.index}].path[{(j + 1) % len(stops)}]",
                f"loop {spec.name!r} goes from {a.text!r} (net {a.net!r}) to {b.text!r} "
                f"(net {b.net!r}): consecutive terminals must be on the same net (the path runs "
                "through its copper) or of the same element (the path runs through it)",
            )
    # The check is on the hops, not on the injection: element hops between the same
    # two nodes cancel there (two elements between the same two copper-less nets),
    # and then no copper carries loop current and the loop's copper inductance is 0.
    if not through_element:
        raise _routes_error(
            spec, graph.routes.path, f"loop[{spec.index}].path",
            f"loop {spec.name!r} never passes through an element, so no current flows in it; "
            "name two terminals of one element in a row (or first and last) where the loop "
            "runs through it",
        )
    net_of = graph.arrays.net_index
    wanted = [k for k, name in enumerate(graph.nets) if name in nets]
    segments = np.flatnonzero(np.isin(net_of, wanted)) if len(net_of) else np.zeros(0, int)
    nf = graph.arrays.node_from[segments].astype(np.int64)
    nt = graph.arrays.node_to[segments].astype(np.int64)
    labels = node_components(nf, nt, n_nodes)
    for j, a, b in hops:
        if labels[a.node] != labels[b.node]:
            raise _routes_error(
                spec, graph.routes.path, f"loop[{spec.index}].path[{(j + 1) % len(stops)}]",
                f"loop {spec.name!r}: no copper of net {a.net!r} joins {a.text!r} to {b.text!r} "
                "(the net's copper is in separate pieces, or a terminal sits on the net's anchor "
                "away from this piece); connect the copper or place the terminal with a [[pin]]",
            )
    return segments, injection, n_nodes


@dataclass(frozen=True)
class ProbeNodes:
    """A probe's place in the copper graph (node ids and segment indices)."""

    probe: Probe
    tip_contact: int
    ground_contact: int
    tip_end: int
    ground_end: int
    tip_segments: tuple[int, ...]  # contact -> end
    ground_segments: tuple[int, ...]  # contact -> end


def probe_nodes(graph: CopperGraph) -> list[ProbeNodes]:
    """Every probe of the graph, in the routes file's order."""
    out: list[ProbeNodes] = []
    for pr in graph.routes.probes:
        tip = tuple(s.index for s in graph.segments if s.source == f"probe[{pr.index}].tip_lead")
        gnd = tuple(s.index for s in graph.segments
                    if s.source == f"probe[{pr.index}].ground_lead")
        segs = graph.segments
        out.append(ProbeNodes(
            probe=pr, tip_contact=segs[tip[0]].node_from, ground_contact=segs[gnd[0]].node_from,
            tip_end=segs[tip[-1]].node_to, ground_end=segs[gnd[-1]].node_to,
            tip_segments=tip, ground_segments=gnd))
    return out


def kept_nodes(graph: CopperGraph) -> set[int]:
    """Nodes that must stay in the netlist: the contacts (a lead is never merged
    with the copper it touches) and the lead ends (the instrument's terminals)."""
    out: set[int] = set()
    for pn in probe_nodes(graph):
        out |= {pn.tip_contact, pn.ground_contact, pn.tip_end, pn.ground_end}
    return out
