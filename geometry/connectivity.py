"""Checks of the finished copper graph (part of the graph builder,
:mod:`geometry.graph`): islands, pins not reached from their anchor, the
anchor of every net, and the return plane each segment is imaged in.
"""

from __future__ import annotations

import numpy as np

from geometry.components import component_roots
from geometry.errors import RoutesError
from geometry.graph_base import (
    _listing,
    _source_order,
    _State,
)
from geometry.model import (
    Node,
    PinNode,
    Plane,
    Segment,
)


class _Connectivity(_State):
    """Connectivity, anchors and images."""

    def connectivity(self, nodes: tuple[Node, ...], segments: list[Segment],
                     pins: list[PinNode]) -> dict[str, int]:
        r = self.r
        roots = component_roots(len(nodes), [s.node_from for s in segments],
                                [s.node_to for s in segments]).tolist()

        def find(a: int) -> int:
            return roots[a]

        pins_of: dict[str, list[PinNode]] = {}
        for pn in pins:
            pins_of.setdefault(pn.net, []).append(pn)
        anchors: dict[str, int] = {}
        for net in list(pins_of) + [n for n, o in r.nets.items() if n not in pins_of]:
            opts = r.nets.get(net)
            plist = pins_of.get(net, [])
            anchor_pin: PinNode | None = plist[0] if plist else None
            if opts is not None and opts.anchor is not None:
                anchor_pin = self.find_anchor(net, opts.anchor, plist)
            if anchor_pin is None:
                continue
            anchors[net] = anchor_pin.node
            root = find(anchor_pin.node)
            for pn in plist:
                if find(pn.node) != root:
                    raise RoutesError(
                        f"pin {pn.pin.terminal!r} of net {net!r} is not connected through copper "
                        f"to the net's anchor, pin {anchor_pin.pin.terminal!r} "
                        f"(pin[{anchor_pin.pin.index}]); join them with copper of net {net!r}",
                        file=r.path, line=pn.pin.line, key=f"pin[{pn.pin.index}]")
        # islands: connected copper of a net that holds no pin
        with_pin = {find(pn.node) for pn in pins}
        reported: set[int] = set()
        nodes_of: dict[str, list[int]] = {}
        for n in nodes:
            nodes_of.setdefault(n.net, []).append(n.id)
        sources_of: dict[str, dict[str, None]] = {}
        for s in segments:
            sources_of.setdefault(s.net, {})[s.source] = None
        for net in self.nets:
            if net not in pins_of:
                reported.update(find(n) for n in nodes_of.get(net, []))
                srcs = sorted(sources_of.get(net, {}), key=_source_order)
                if not srcs:  # only a return plane: it still images the copper
                    continue
                self.warn(srcs[0], self.line_of(srcs[0]),
                          f"net {net!r} has copper ({_listing(srcs)}) but no pin: it is not "
                          f"connected to the circuit")
        groups: dict[int, dict[str, None]] = {}
        for s in segments:
            root = find(s.node_from)
            if root in with_pin or root in reported:
                continue
            groups.setdefault(root, {})[s.source] = None
        for root, group in groups.items():
            net = nodes[root].net
            srcs = list(group)
            self.warn(srcs[0], self.line_of(srcs[0]),
                      f"copper island of net {net!r} ({_listing(srcs)}) is connected to no pin; "
                      f"it carries no current from the circuit")
        return anchors

    def find_anchor(self, net: str, anchor: str, plist: list[PinNode]) -> PinNode:
        r = self.r
        opts = r.nets[net]
        if self.anchor_pins is not None and net in self.anchor_pins:
            idx = self.anchor_pins[net]
            for pn in plist:
                if pn.pin.index == idx:
                    return pn
        elem, _, term = anchor.strip().rpartition(":")
        for pn in plist:
            if pn.pin.element == elem.strip().lower() and pn.pin.term == term.strip().lower():
                return pn
        placed = ", ".join(repr(pn.pin.terminal) for pn in plist) or "none"
        raise RoutesError(
            f"the anchor {anchor!r} of net {net!r} is not placed by any [[pin]] of that net; "
            f"pins of net {net!r}: {placed}", file=r.path, line=opts.line,
            key=f"nets.{net}.anchor")

    def mirror(self, segments: list[Segment], planes: tuple[Plane, ...]) -> np.ndarray:
        n = len(segments)
        out = np.full(n, np.nan)
        if not planes or not n:
            return out
        zlo = np.empty(n)
        zhi = np.empty(n)
        for k, s in enumerate(segments):
            if s.kind == "trace":
                la = self.r.layers[str(s.layer)]
                zlo[k], zhi[k] = la.z, la.top
            else:
                zlo[k], zhi[k] = min(s.start[2], s.end[2]), max(s.start[2], s.end[2])
        zmid = 0.5 * (zlo + zhi)
        eps = 1e-12
        best = np.full(n, np.inf)
        above_any = np.zeros(n, dtype=bool)
        below_any = np.zeros(n, dtype=bool)
        for pl in sorted(planes, key=lambda q: q.z_bottom):
            above = zlo >= pl.z_top - eps  # conductor above the plane: image at its top face
            below = zhi <= pl.z_bottom + eps
            dist = np.where(above, zmid - pl.z_top, np.where(below, pl.z_bottom - zmid, np.inf))
            face = np.where(above, pl.z_top, pl.z_bottom)
            closer = dist < best
            out = np.where(closer, face, out)
            best = np.where(closer, dist, best)
            above_any |= above
            below_any |= below
        both = above_any & below_any
        if both.any():
            done: set[str] = set()
            for kk in np.flatnonzero(both):
                k = int(kk)
                s = segments[k]
                key = f"layer {s.layer}" if s.kind == "trace" else s.source
                if key in done:
                    continue
                done.add(key)
                what = (f"traces on layer {s.layer!r}" if s.kind == "trace"
                        else f"the barrel ({s.source})" if s.kind == "via"
                        else f"the probe lead ({s.source})")
                nearest = next(p.layer for p in planes if out[k] in (p.z_top, p.z_bottom))
                self.warn(s.source, self.line_of(s.source),
                          f"{what} lie between two return planes; imaged in the nearest one "
                          f"(layer {nearest!r}) only (a two-plane image series is not modelled)")
        return out

    def warn_dangling_vias(self, segments: list[Segment], pins: list[PinNode],
                           nodes: tuple[Node, ...]) -> None:
        """Warn (:mod:`geometry.traps`) for each via that joins copper on one layer
        only: nothing else of its net (trace, pin, plane, via, probe contact) at
        its other layers, so it carries no current. A via end left free is
        normal (a through via), so is a pin's own hole (a pin where it joins);
        a via that joins nothing is already an island."""
        degree = [0] * len(nodes)
        for s in segments:
            degree[s.node_from] += 1
            degree[s.node_to] += 1
        for pn in pins:
            degree[pn.node] += 1
        pin_nodes = {pn.node for pn in pins}
        chains: dict[str, list[Segment]] = {}
        for s in segments:
            if s.kind == "via":
                chains.setdefault(s.source, []).append(s)
        for source, chain in chains.items():
            own = [0] * len(nodes)
            for s in chain:
                own[s.node_from] += 1
                own[s.node_to] += 1
            ids = list(dict.fromkeys([chain[0].node_from] + [s.node_to for s in chain]))
            joined = [k for k in ids if nodes[k].plane or degree[k] > own[k]]
            if len(joined) != 1 or joined[0] in pin_nodes:  # a pin's own hole: normal
                continue
            n = nodes[joined[0]]
            free = ", ".join(repr(nodes[k].layer) for k in ids if k not in joined)
            self.warn(source, self.line_of(source),
                      f"the via joins copper of net {n.net!r} on layer {n.layer!r} only; at "
                      f"{self.fmt_pt(n.point[0], n.point[1])} on layer(s) {free} nothing of the net "
                      f"meets it (no trace, pin, plane or via): it carries no current and a loop "
                      f"through it is not the one drawn")
