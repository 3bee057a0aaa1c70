"""The copper graph: every net's copper as straight segments joined at nodes.

``build_graph(routes, pin_nets)`` turns a validated :class:`Routes` into a
:class:`CopperGraph`. ``pin_nets[i]`` is the net of ``routes.pins[i]`` (the
netlist node of its terminal; see :func:`parasite.pins.resolve_pin_nets`), so
that this package needs no netlist.

Rules (``snap`` is the routes file's tolerance, in metres):

* Traces: each straight piece of a polyline is a bar. A trace end or vertex
  lying within ``snap`` of the centre line of another trace of the same net
  on the same layer splits that piece there (T-junction); same-net centre
  lines that cross split each other at the crossing.
* Vias: a via spans the layers between its ``from`` and ``to`` layers
  (inclusive, by height). It joins its two end layers always, and an inner
  layer where that layer has copper of its net at ``at``: a trace whose
  centre line passes within half its width of ``at`` (the nearest such
  trace, split at the nearest centre-line point: one node per via and layer,
  so a second trace of the net under the same pad joins only where it meets
  the first), a pin of the net within the barrel's radius (or
  ``snap``), another via of the net joined there, or the net's plane. One
  vertical segment runs between each consecutive pair of joined layers, from
  mid-plane to mid-plane, oriented from ``from`` toward ``to``. The barrel
  stays at ``at``; its node on a trace is the trace's centre-line point, so a
  via segment's end may sit off its node by up to half the trace's width.
* Pins: a pin joins the nearest copper of its net on its layer: a via's
  node when within the barrel's radius (or ``snap``) of ``at``, else the
  nearest centre-line point of a trace within half its width (a vertex, or a
  split of the piece). On a plane layer of its net it is on the plane node.
* Planes: one node per plane layer (``Node.plane``; its point is where the
  first via or pin joins it, at the layer's mid-plane, else x = y = 0); vias
  of the plane's net end on it. ``SegmentArrays.mirror_z`` is the face of the nearest plane
  toward each segment (a segment is never imaged in a plane it crosses or
  touches); NaN without a plane.
* Errors (:class:`RoutesError`): a pin on no copper of its net (naming the
  nearest copper of the net), a pin on another net's copper, a pin not
  reached from its net's anchor, an anchor that no pin of the net places.
  Warnings (``CopperGraph.warnings``): copper islands without a pin, a net
  with copper but no pin, copper of different nets that overlaps, conductors
  between two planes (imaged in the nearest one only).

Order, for deterministic output: nets in order of first appearance (traces,
then vias, then plane layers); segments are the pieces of the traces in file
order, then the vias' segments in file order; node ids in order of creation
along that walk, then pins, then planes not yet reached. Segment ids are
``<net>.<n>`` counting from 1 per net in the same order.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from geometry.errors import RoutesError
from geometry.model import (
    UNIT_SCALE,
    CopperGraph,
    Layer,
    Node,
    Pin,
    PinNode,
    Plane,
    Point2,
    Routes,
    Segment,
    SegmentArrays,
    SegmentKind,
    canonical_net,
)
from geometry.spatial import box_pairs, crossings, project, segment_distance


@dataclass
class _Pieces:
    """The straight pieces of all traces, as arrays (P pieces)."""

    ax: np.ndarray
    ay: np.ndarray
    bx: np.ndarray
    by: np.ndarray
    w: np.ndarray
    trace: np.ndarray  # index into routes.traces
    net: np.ndarray  # net id
    layer: np.ndarray  # layer id

    @property
    def length(self) -> np.ndarray:
        return np.hypot(self.bx - self.ax, self.by - self.ay)


class _NodeTable:
    """Nodes per (net, layer) found by position within ``snap`` (grid hash
    with cells of size ``snap``, so a lookup reads 3 x 3 cells)."""

    def __init__(self, snap: float) -> None:
        self.snap = snap
        self.net: list[str] = []
        self.point: list[tuple[float, float, float]] = []
        self.layer: list[str | None] = []
        self.plane: list[bool] = []
        self.grid: dict[tuple[str, str, int, int], list[int]] = {}

    def new(self, net: str, point: tuple[float, float, float], layer: str | None,
            plane: bool = False) -> int:
        self.net.append(net)
        self.point.append(point)
        self.layer.append(layer)
        self.plane.append(plane)
        return len(self.net) - 1

    def find(self, net: str, layer: str, x: float, y: float) -> int | None:
        ix, iy = math.floor(x / self.snap), math.floor(y / self.snap)
        best, best_d = None, math.inf
        for dx in (-1, 0, 1):
            for dy in (-1, 0, 1):
                for nid in self.grid.get((net, layer, ix + dx, iy + dy), ()):
                    px, py, _ = self.point[nid]
                    d = math.hypot(px - x, py - y)
                    if d <= self.snap and (d < best_d or (d == best_d and best is not None
                                                          and nid < best)):
                        best, best_d = nid, d
        return best

    def at(self, net: str, layer: Layer, x: float, y: float) -> int:
        found = self.find(net, layer.name, x, y)
        if found is not None:
            return found
        nid = self.new(net, (x, y, layer.mid), layer.name)
        key = (net, layer.name, math.floor(x / self.snap), math.floor(y / self.snap))
        self.grid.setdefault(key, []).append(nid)
        return nid


@dataclass
class _ViaPlan:
    layers: list[Layer]  # spanned layers, ordered from -> to
    targets: list[Point2 | None | str]  # per spanned layer: point to join, "plane", or None


class _Builder:
    def __init__(self, routes: Routes, pin_nets: Sequence[str],
                 anchor_pins: Mapping[str, int] | None) -> None:
        if len(pin_nets) != len(routes.pins):
            raise ValueError(f"pin_nets has {len(pin_nets)} entries for {len(routes.pins)} pins")
        self.r = routes
        self.snap = routes.snap
        self.scale = UNIT_SCALE[routes.units]
        self.pin_nets = [canonical_net(n) for n in pin_nets]
        self.anchor_pins = anchor_pins
        self.warnings: list[str] = []
        self.layer_names = list(routes.layers)
        self.layer_id = {n: k for k, n in enumerate(self.layer_names)}
        self.by_height = sorted(routes.layers.values(), key=lambda la: la.z)
        nets: list[str] = []
        for t in routes.traces:
            nets.append(t.net)
        for v in routes.vias:
            nets.append(v.net)
        for la in routes.layers.values():
            if la.plane is not None:
                nets.append(la.plane)
        self.nets = tuple(dict.fromkeys(nets))
        self.net_id = {n: k for k, n in enumerate(self.nets)}
        self.plane_layer_of_net: dict[str, list[str]] = {}
        for la in routes.layers.values():
            if la.plane is not None:
                self.plane_layer_of_net.setdefault(la.plane, []).append(la.name)

    # -- messages -------------------------------------------------------
    def fmt_len(self, metres: float) -> str:
        return f"{metres / self.scale:.6g} {self.r.units}"

    def fmt_pt(self, x: float, y: float) -> str:
        return f"[{x / self.scale:.6g}, {y / self.scale:.6g}] {self.r.units}"

    def warn(self, key: str, line: int | None, message: str) -> None:
        where = f"{self.r.path}:{line}" if line is not None else self.r.path
        self.warnings.append(f"{where}: warning: {key}: {message}")

    def pin_error(self, pin: Pin, message: str) -> RoutesError:
        return RoutesError(message, file=self.r.path, line=pin.line, key=f"pin[{pin.index}].at")

    # -- build ----------------------------------------------------------
    def pieces(self) -> _Pieces:
        cols: list[list[float]] = [[], [], [], [], []]
        trace, net, layer = [], [], []
        for t in self.r.traces:
            for (x0, y0), (x1, y1) in zip(t.points[:-1], t.points[1:], strict=True):
                for c, v in zip(cols, (x0, y0, x1, y1, t.width), strict=True):
                    c.append(v)
                trace.append(t.index)
                net.append(self.net_id[t.net])
                layer.append(self.layer_id[t.layer])
        ax, ay, bx, by, w = (np.asarray(c, dtype=float) for c in cols)
        return _Pieces(ax, ay, bx, by, w, trace=np.asarray(trace, dtype=np.int64),
                       net=np.asarray(net, dtype=np.int64), layer=np.asarray(layer, dtype=np.int64))

    def run(self) -> CopperGraph:
        r = self.r
        P = self.pieces()
        self.P = P
        n_pieces = len(P.ax)
        length = P.length
        self.length = length
        splits: list[list[Point2]] = [[] for _ in range(n_pieces)]
        self.splits = splits

        # spanned layers of every via
        plans: list[_ViaPlan] = []
        for v in r.vias:
            lo, hi = r.layers[v.from_layer], r.layers[v.to_layer]
            zmin, zmax = min(lo.z, hi.z), max(lo.z, hi.z)
            span = [la for la in self.by_height if zmin <= la.z <= zmax]
            if lo.z > hi.z:
                span.reverse()
            plans.append(_ViaPlan(span, [None] * len(span)))

        # items per trace layer: pieces, via barrels, pins
        via_items: dict[int, list[tuple[int, int]]] = {}  # layer id -> [(via, k in span)]
        for vi, plan in enumerate(plans):
            for k, la in enumerate(plan.layers):
                if la.plane is None:
                    via_items.setdefault(self.layer_id[la.name], []).append((vi, k))
        pin_items: dict[int, list[int]] = {}
        for pi, p in enumerate(r.pins):
            if r.layers[p.layer].plane is None:
                pin_items.setdefault(self.layer_id[p.layer], []).append(pi)

        overlap_seen: set[tuple[str, str]] = set()
        # per layer: candidate pairs among all items
        layer_pairs: dict[int, tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]] = {}
        for lid, _name in enumerate(self.layer_names):
            pidx = np.flatnonzero(P.layer == lid)
            vit = via_items.get(lid, [])
            pit = pin_items.get(lid, [])
            if len(pidx) + len(vit) + len(pit) == 0:
                continue
            hw = 0.5 * P.w[pidx] + self.snap
            xmin = [np.minimum(P.ax[pidx], P.bx[pidx]) - hw]
            xmax = [np.maximum(P.ax[pidx], P.bx[pidx]) + hw]
            ymin = [np.minimum(P.ay[pidx], P.by[pidx]) - hw]
            ymax = [np.maximum(P.ay[pidx], P.by[pidx]) + hw]
            kind = [np.zeros(len(pidx), dtype=np.int64)]
            ref = [pidx]
            if vit:
                vx = np.array([r.vias[vi].at[0] for vi, _ in vit])
                vy = np.array([r.vias[vi].at[1] for vi, _ in vit])
                vr = np.array([0.5 * r.vias[vi].diameter for vi, _ in vit]) + self.snap
                xmin.append(vx - vr)
                xmax.append(vx + vr)
                ymin.append(vy - vr)
                ymax.append(vy + vr)
                kind.append(np.ones(len(vit), dtype=np.int64))
                ref.append(np.arange(len(vit)))
            if pit:
                px = np.array([r.pins[pi].at[0] for pi in pit])
                py = np.array([r.pins[pi].at[1] for pi in pit])
                xmin.append(px - self.snap)
                xmax.append(px + self.snap)
                ymin.append(py - self.snap)
                ymax.append(py + self.snap)
                kind.append(np.full(len(pit), 2, dtype=np.int64))
                ref.append(np.arange(len(pit)))
            i, j = box_pairs(np.concatenate(xmin), np.concatenate(xmax),
                             np.concatenate(ymin), np.concatenate(ymax))
            k_all = np.concatenate(kind)
            r_all = np.concatenate(ref)
            layer_pairs[lid] = (i, j, k_all, r_all)
            pp = (k_all[i] == 0) & (k_all[j] == 0)
            self.piece_pairs(r_all[i[pp]], r_all[j[pp]], length, overlap_seen)

        # vias: decide joins
        self.plan_vias(plans, layer_pairs, via_items, pin_items, overlap_seen)
        # pins: targets (may split pieces)
        pin_targets = self.plan_pins(layer_pairs, via_items, pin_items, plans)
        # probe contacts: targets (may split pieces, like pins)
        probe_targets = self.plan_probes(plans)

        # walk: nodes and segments
        nodes = _NodeTable(self.snap)
        self.nodes = nodes
        self.plane_nodes: dict[str, int] = {}
        segs: list[dict[str, object]] = []
        pax, pay, pbx, pby = P.ax.tolist(), P.ay.tolist(), P.bx.tolist(), P.by.tolist()
        plen = length.tolist()
        pc = -1
        for t in r.traces:
            layer = r.layers[t.layer]
            for _k in range(len(t.points) - 1):
                pc += 1
                ax, ay, bx, by = pax[pc], pay[pc], pbx[pc], pby[pc]
                L = plen[pc]
                pts: list[Point2] = [(ax, ay)]
                ts = []
                for sx, sy in splits[pc]:
                    tt = ((sx - ax) * (bx - ax) + (sy - ay) * (by - ay)) / (L * L)
                    ts.append((tt * L, sx, sy))
                last = 0.0
                for s_len, sx, sy in sorted(ts):
                    if s_len <= self.snap or s_len >= L - self.snap or s_len - last <= self.snap:
                        continue
                    pts.append((sx, sy))
                    last = s_len
                pts.append((bx, by))
                ids = [nodes.at(t.net, layer, x, y) for x, y in pts]
                for n0, n1 in zip(ids[:-1], ids[1:], strict=True):
                    if n0 == n1:
                        continue
                    segs.append(dict(net=t.net, kind="trace", layer=t.layer,
                                     start=nodes.point[n0], end=nodes.point[n1],
                                     width=t.width, thickness=layer.thickness, radius=0.0,
                                     inner=0.0, n0=n0, n1=n1, source=f"trace[{t.index}]",
                                     name=t.name))
        for v, plan in zip(r.vias, plans, strict=True):
            ids, zs, names = [], [], []
            for la, target in zip(plan.layers, plan.targets, strict=True):
                if target is None:
                    continue
                if target == "plane":
                    nid = self.plane_node(la, v.at)
                else:
                    assert isinstance(target, tuple)
                    nid = nodes.at(v.net, la, target[0], target[1])
                ids.append(nid)
                zs.append(la.mid)
                names.append(la.name)
            radius = 0.5 * v.diameter
            inner = radius - v.wall if v.wall is not None else 0.0
            for k in range(len(ids) - 1):
                segs.append(dict(net=v.net, kind="via", layer=f"{names[k]}-{names[k + 1]}",
                                 start=(v.at[0], v.at[1], zs[k]), end=(v.at[0], v.at[1], zs[k + 1]),
                                 width=v.diameter, thickness=v.diameter, radius=radius,
                                 inner=inner, n0=ids[k], n1=ids[k + 1],
                                 source=f"via[{v.index}]", name=None))
        pin_nodes: list[PinNode] = []
        for p, net, target in zip(r.pins, self.pin_nets, pin_targets, strict=True):
            la = r.layers[p.layer]
            if target == "plane":
                nid = self.plane_node(la, p.at)
            else:
                assert isinstance(target, tuple)
                nid = nodes.at(net, la, target[0], target[1])
            pin_nodes.append(PinNode(pin=p, net=net, node=nid))
        probe_nets = self.probe_leads(probe_targets, segs)
        for la in r.layers.values():
            if la.plane is not None:
                self.plane_node(la, None)

        node_objs = tuple(Node(id=k, net=nodes.net[k], point=nodes.point[k], layer=nodes.layer[k],
                               plane=nodes.plane[k]) for k in range(len(nodes.net)))
        counters: dict[str, int] = {}
        segments: list[Segment] = []
        for k, s in enumerate(segs):
            net = str(s["net"])
            counters[net] = counters.get(net, 0) + 1
            segments.append(Segment(
                index=k, id=f"{net}.{counters[net]}", net=net, kind=_kind(s["kind"]),
                layer=None if s["layer"] is None else str(s["layer"]),
                start=s["start"], end=s["end"],  # type: ignore[arg-type]
                width=float(s["width"]), thickness=float(s["thickness"]),  # type: ignore[arg-type]
                radius=float(s["radius"]), inner_radius=float(s["inner"]),  # type: ignore[arg-type]
                node_from=int(s["n0"]), node_to=int(s["n1"]),  # type: ignore[call-overload]
                source=str(s["source"]), name=s["name"],  # type: ignore[arg-type]
            ))
        planes = tuple(
            Plane(net=la.plane, layer=la.name, z_bottom=la.z, z_top=la.top,
                  node=self.plane_nodes[la.name])
            for la in r.layers.values() if la.plane is not None
        )
        anchors = self.connectivity(node_objs, [s for s in segments if s.kind != "probe"],
                                    pin_nodes)
        self.check_probe_contacts(node_objs, segments, pin_nodes)
        self.nets = self.nets + probe_nets
        mirror = self.mirror(segments, planes)
        arrays = _arrays(segments, self.nets, mirror)
        return CopperGraph(routes=r, nets=self.nets, nodes=node_objs, segments=tuple(segments),
                           arrays=arrays, pins=tuple(pin_nodes), anchors=anchors, planes=planes,
                           warnings=tuple(self.warnings))

    def plane_node(self, layer: Layer, at: Point2 | None) -> int:
        if layer.name not in self.plane_nodes:
            assert layer.plane is not None
            x, y = at if at is not None else (0.0, 0.0)
            self.plane_nodes[layer.name] = self.nodes.new(layer.plane, (x, y, layer.mid),
                                                          layer.name, plane=True)
        return self.plane_nodes[layer.name]

    # -- traces ---------------------------------------------------------
    def piece_pairs(self, i: np.ndarray, j: np.ndarray, length: np.ndarray,
                    overlap_seen: set[tuple[str, str]]) -> None:
        if len(i) == 0:
            return
        P, snap = self.P, self.snap
        same = P.net[i] == P.net[j]
        # T-junctions: an end of one piece on the other's centre line
        for s_idx, o_idx in ((i, j), (j, i)):
            for ex, ey in ((P.ax[o_idx], P.ay[o_idx]), (P.bx[o_idx], P.by[o_idx])):
                t, d = project(ex, ey, P.ax[s_idx], P.ay[s_idx], P.bx[s_idx], P.by[s_idx])
                L = length[s_idx]
                hit = same & (d <= snap) & (t * L > snap) & (t * L < L - snap)
                for k in np.flatnonzero(hit):
                    self.splits[int(s_idx[k])].append((float(ex[k]), float(ey[k])))
        # crossings of same-net centre lines
        s, u, ok = crossings(P.ax[i], P.ay[i], P.bx[i], P.by[i], P.ax[j], P.ay[j], P.bx[j], P.by[j])
        Li, Lj = length[i], length[j]
        hit = same & ok & (s * Li > snap) & (s * Li < Li - snap) & (u * Lj > snap) & (u * Lj < Lj - snap)
        for k in np.flatnonzero(hit):
            a, b = int(i[k]), int(j[k])
            x = float(P.ax[a] + s[k] * (P.bx[a] - P.ax[a]))
            y = float(P.ay[a] + s[k] * (P.by[a] - P.ay[a]))
            self.splits[a].append((x, y))
            self.splits[b].append((x, y))
        # overlapping copper of different nets
        diff = np.flatnonzero(~same)
        if len(diff):
            ia, ib = i[diff], j[diff]
            d = segment_distance(P.ax[ia], P.ay[ia], P.bx[ia], P.by[ia],
                                 P.ax[ib], P.ay[ib], P.bx[ib], P.by[ib])
            bad = d < 0.5 * (P.w[ia] + P.w[ib]) - snap
            for k in np.flatnonzero(bad):
                ta, tb = int(P.trace[ia[k]]), int(P.trace[ib[k]])
                key = (f"trace[{ta}]", f"trace[{tb}]")
                if key in overlap_seen:
                    continue
                overlap_seen.add(key)
                tra, trb = self.r.traces[ta], self.r.traces[tb]
                mx, my = _near_point(P, int(ia[k]), int(ib[k]))
                self.warn(key[0], tra.line,
                          f"copper of net {tra.net!r} overlaps copper of net {trb.net!r} "
                          f"({key[1]}) on layer {tra.layer!r} near {self.fmt_pt(mx, my)}")

    def nearest_piece(self, net: str, lid: int, x: float, y: float,
                      cand: Sequence[int]) -> tuple[int, float, float] | None:
        """Nearest piece of ``net`` among ``cand`` whose copper (half width,
        plus snap) holds (x, y): (piece, t clamped, distance)."""
        P = self.P
        if not len(cand):
            return None
        c = np.asarray(cand, dtype=np.int64)
        c = c[(P.net[c] == self.net_id.get(net, -1)) & (P.layer[c] == lid)]
        if not len(c):
            return None
        t, d = project(np.full(len(c), x), np.full(len(c), y), P.ax[c], P.ay[c], P.bx[c], P.by[c])
        inside = d <= 0.5 * P.w[c] + self.snap
        if not inside.any():
            return None
        k = int(np.flatnonzero(inside)[np.argmin(d[inside])])
        return int(c[k]), float(np.clip(t[k], 0.0, 1.0)), float(d[k])

    def join_piece(self, pc: int, t: float) -> Point2:
        """The node point on piece ``pc`` at parameter ``t`` (an end, or a split)."""
        P = self.P
        L = float(self.length[pc])
        if t * L <= self.snap:
            return (float(P.ax[pc]), float(P.ay[pc]))
        if t * L >= L - self.snap:
            return (float(P.bx[pc]), float(P.by[pc]))
        x = float(P.ax[pc] + t * (P.bx[pc] - P.ax[pc]))
        y = float(P.ay[pc] + t * (P.by[pc] - P.ay[pc]))
        for sx, sy in self.splits[pc]:
            if math.hypot(sx - x, sy - y) <= self.snap:
                return (sx, sy)
        self.splits[pc].append((x, y))
        return (x, y)

    # -- vias -----------------------------------------------------------
    def plan_vias(self, plans: list[_ViaPlan], layer_pairs: dict, via_items: dict,
                  pin_items: dict, overlap_seen: set[tuple[str, str]]) -> None:
        r = self.r
        # candidate pieces and pins for each via item, from the per-layer pairs
        near_pieces: dict[tuple[int, int], list[int]] = {}
        near_pins: dict[tuple[int, int], list[int]] = {}
        near_vias: dict[tuple[int, int], list[int]] = {}
        for lid, own, other_kind, other in _touching(layer_pairs, 1):
            vit = via_items.get(lid, [])
            key = vit[own]
            if other_kind == 0:
                near_pieces.setdefault(key, []).append(other)
            elif other_kind == 2:
                near_pins.setdefault(key, []).append(pin_items.get(lid, [])[other])
            else:
                near_vias.setdefault(key, []).append(vit[other][0])
        for vi, (v, plan) in enumerate(zip(r.vias, plans, strict=True)):
            radius = 0.5 * v.diameter
            last = len(plan.layers) - 1
            for k, la in enumerate(plan.layers):
                end = k in (0, last)
                if la.plane is not None:
                    if la.plane == v.net:
                        plan.targets[k] = "plane"
                    elif end:
                        plan.targets[k] = v.at
                    continue
                lid = self.layer_id[la.name]
                cand = near_pieces.get((vi, k), [])
                hit = self.nearest_piece(v.net, lid, v.at[0], v.at[1], cand)
                if hit is not None:
                    plan.targets[k] = self.join_piece(hit[0], hit[1])
                elif end or any(
                    self.pin_nets[pi] == v.net
                    and math.dist(r.pins[pi].at, v.at) <= max(radius, self.snap)
                    for pi in near_pins.get((vi, k), [])
                ):
                    plan.targets[k] = v.at
                # copper of other nets touching the barrel on this layer
                P = self.P
                for pc in cand:
                    if P.net[pc] == self.net_id[v.net]:
                        continue
                    _, d = project(np.array([v.at[0]]), np.array([v.at[1]]), P.ax[pc:pc + 1],
                                   P.ay[pc:pc + 1], P.bx[pc:pc + 1], P.by[pc:pc + 1])
                    if d[0] < 0.5 * P.w[pc] + radius - self.snap:
                        tr = r.traces[int(P.trace[pc])]
                        key = (f"via[{vi}]", f"trace[{tr.index}]")
                        if key not in overlap_seen:
                            overlap_seen.add(key)
                            self.warn(key[0], v.line,
                                      f"the barrel of net {v.net!r} overlaps copper of net "
                                      f"{tr.net!r} ({key[1]}) on layer {la.name!r} at "
                                      f"{self.fmt_pt(*v.at)}")
                for other in near_vias.get((vi, k), []):
                    ov = r.vias[other]
                    if ov.net != v.net and other > vi and math.dist(ov.at, v.at) < (
                        radius + 0.5 * ov.diameter - self.snap
                    ):
                        key = (f"via[{vi}]", f"via[{other}]")
                        if key not in overlap_seen:
                            overlap_seen.add(key)
                            self.warn(key[0], v.line,
                                      f"the barrel of net {v.net!r} overlaps the barrel of net "
                                      f"{ov.net!r} ({key[1]}) at {self.fmt_pt(*v.at)}")
        # stacked vias: an inner layer where another via of the net is joined at `at`
        joined: dict[tuple[str, str], list[Point2]] = {}
        for v, plan in zip(r.vias, plans, strict=True):
            for la, target in zip(plan.layers, plan.targets, strict=True):
                if isinstance(target, tuple):
                    joined.setdefault((v.net, la.name), []).append(v.at)
        for v, plan in zip(r.vias, plans, strict=True):
            for k, la in enumerate(plan.layers):
                if plan.targets[k] is None and la.plane is None and any(
                    math.dist(p, v.at) <= self.snap for p in joined.get((v.net, la.name), [])
                ):
                    plan.targets[k] = v.at

    # -- pins -----------------------------------------------------------
    def plan_pins(self, layer_pairs: dict, via_items: dict, pin_items: dict,
                  plans: list[_ViaPlan]) -> list[Point2 | str]:
        r = self.r
        near_pieces: dict[int, list[int]] = {}
        near_vias: dict[int, list[tuple[int, int]]] = {}
        for lid, own, other_kind, other in _touching(layer_pairs, 2):
            pi = pin_items.get(lid, [])[own]
            if other_kind == 0:
                near_pieces.setdefault(pi, []).append(other)
            elif other_kind == 1:
                near_vias.setdefault(pi, []).append(via_items.get(lid, [])[other])
        targets: list[Point2 | str] = []
        for pi, (p, net) in enumerate(zip(r.pins, self.pin_nets, strict=True)):
            la = r.layers[p.layer]
            if la.plane is not None:
                if la.plane != net:
                    raise self.pin_error(
                        p, f"pin {p.terminal!r} is on net {net!r} (its terminal's node in the "
                           f"netlist) but lies on layer {p.layer!r}, the return plane of net "
                           f"{la.plane!r}; place it on copper of net {net!r}")
                targets.append("plane")
                continue
            lid = self.layer_id[p.layer]
            best: tuple[float, Point2] | None = None
            for vi, k in near_vias.get(pi, []):
                v = r.vias[vi]
                target = plans[vi].targets[k]
                d = math.dist(v.at, p.at)
                if v.net == net and isinstance(target, tuple) and d <= max(0.5 * v.diameter,
                                                                           self.snap):
                    if best is None or d < best[0]:
                        best = (d, target)
            hit = self.nearest_piece(net, lid, p.at[0], p.at[1], near_pieces.get(pi, []))
            if hit is not None and (best is None or hit[2] < best[0]):
                best = (hit[2], self.join_piece(hit[0], hit[1]))
            if best is None:
                raise self.off_copper(p, net, near_pieces.get(pi, []), near_vias.get(pi, []), plans)
            targets.append(best[1])
        return targets

    def off_copper(self, p: Pin, net: str, pieces: Sequence[int],
                   vias: Sequence[tuple[int, int]], plans: list[_ViaPlan]) -> RoutesError:
        """The error for a pin that lies on no copper of its net."""
        r, P = self.r, self.P
        where = f"pin {p.terminal!r} at {self.fmt_pt(*p.at)} on layer {p.layer!r}"
        # copper of another net under the pin?
        others: list[str] = []
        for pc in pieces:
            _, d = project(np.array([p.at[0]]), np.array([p.at[1]]), P.ax[pc:pc + 1],
                           P.ay[pc:pc + 1], P.bx[pc:pc + 1], P.by[pc:pc + 1])
            if d[0] <= 0.5 * P.w[pc] + self.snap:
                tr = r.traces[int(P.trace[pc])]
                others.append(f"net {tr.net!r} (trace[{tr.index}])")
        for vi, _k in vias:
            v = r.vias[vi]
            if math.dist(v.at, p.at) <= max(0.5 * v.diameter, self.snap):
                others.append(f"net {v.net!r} (via[{vi}])")
        nearest = self.nearest_copper(net, p)
        if others:
            return self.pin_error(
                p, f"{where} lies on copper of {others[0]}, but its terminal is on net {net!r} "
                   f"in the netlist; {nearest}")
        return self.pin_error(p, f"{where} lies on no copper of its net {net!r}; {nearest}")

    def nearest_copper(self, net: str, p: Pin) -> str:
        r, P = self.r, self.P
        if net not in self.net_id:
            return f"net {net!r} has no copper in this routes file"
        cands: list[tuple[float, str]] = []
        m = np.flatnonzero(P.net == self.net_id[net])
        if len(m):
            _, d = project(np.full(len(m), p.at[0]), np.full(len(m), p.at[1]),
                           P.ax[m], P.ay[m], P.bx[m], P.by[m])
            k = int(np.argmin(d))
            pc = int(m[k])
            tr = r.traces[int(P.trace[pc])]
            edge = max(float(d[k]) - 0.5 * tr.width, 0.0)
            cands.append((edge, f"trace[{tr.index}] on layer {tr.layer!r}, its centre line "
                                f"{self.fmt_len(float(d[k]))} away (its edge "
                                f"{self.fmt_len(edge)})"))
        for v in r.vias:
            if v.net == net:
                dv = math.dist(v.at, p.at)
                cands.append((max(dv - 0.5 * v.diameter, 0.0),
                              f"via[{v.index}] at {self.fmt_pt(*v.at)}, {self.fmt_len(dv)} away"))
        for name in self.plane_layer_of_net.get(net, []):
            cands.append((math.inf, f"the plane on layer {name!r}"))
        cands.sort(key=lambda c: c[0])
        return f"the nearest copper of net {net!r} is {cands[0][1]}"

    # -- probes ---------------------------------------------------------
    def plan_probes(self, plans: list[_ViaPlan]) -> list[tuple[str, Point2 | str]]:
        """(net, target) of every probe contact, tip then ground of each probe in
        file order: the nearest copper on the contact's layer (a via joined
        there, or a trace's centre-line point, which splits the piece like a
        pin), restricted to the contact's ``net`` when it names one; on a plane
        layer, the plane."""
        r, P = self.r, self.P
        out: list[tuple[str, Point2 | str]] = []
        for pr in r.probes:
            for key, c in (("tip", pr.tip), ("ground", pr.ground)):
                la = r.layers[c.layer]
                where = (f"the {key} contact of probe {pr.name!r} at {self.fmt_pt(*c.at)} on "
                         f"layer {c.layer!r}")
                err_key = f"probe[{pr.index}].{key}.at"
                if la.plane is not None:
                    if c.net is not None and c.net != la.plane:
                        raise RoutesError(
                            f"{where} lies on the return plane of net {la.plane!r}, not on net "
                            f"{c.net!r}", file=r.path, line=pr.line, key=f"probe[{pr.index}].{key}.net")
                    out.append((la.plane, "plane"))
                    continue
                best: tuple[float, str, Point2] | None = None
                for v, plan in zip(r.vias, plans, strict=True):
                    for k, lay in enumerate(plan.layers):
                        target = plan.targets[k]
                        dv = math.dist(v.at, c.at)
                        if (lay.name == c.layer and isinstance(target, tuple)
                                and dv <= max(0.5 * v.diameter, self.snap)
                                and (c.net is None or v.net == c.net)
                                and (best is None or dv < best[0])):
                            best = (dv, v.net, target)
                lid = self.layer_id[c.layer]
                m = np.flatnonzero((P.layer == lid) if c.net is None else
                                   (P.layer == lid) & (P.net == self.net_id.get(c.net, -1)))
                hit: tuple[int, float, float] | None = None
                if len(m):
                    t, dp = project(np.full(len(m), c.at[0]), np.full(len(m), c.at[1]),
                                    P.ax[m], P.ay[m], P.bx[m], P.by[m])
                    inside = dp <= 0.5 * P.w[m] + self.snap
                    if inside.any():
                        k = int(np.flatnonzero(inside)[np.argmin(dp[inside])])
                        hit = (int(m[k]), float(np.clip(t[k], 0.0, 1.0)), float(dp[k]))
                if hit is not None and (best is None or hit[2] < best[0]):
                    net = self.nets[int(P.net[hit[0]])]
                    best = (hit[2], net, self.join_piece(hit[0], hit[1]))
                if best is None:
                    of = f" of net {c.net!r}" if c.net is not None else ""
                    raise RoutesError(
                        f"{where} lies on no copper{of}; a contact must lie on a trace (within "
                        f"half its width) or a via's pad on that layer", file=r.path,
                        line=pr.line, key=err_key)
                out.append((best[1], best[2]))
        return out

    def probe_leads(self, targets: list[tuple[str, Point2 | str]],
                    segs: list[dict[str, object]]) -> tuple[str, ...]:
        """The contact nodes and the lead segments of every probe (appended to
        ``segs``); returns the leads' nets, ``probe:<name>:tip`` and
        ``probe:<name>:ground`` (names that no netlist node can take: a lead
        is never joined to other copper than its contact)."""
        r, nodes = self.r, self.nodes
        nets: list[str] = []
        self.probe_contact_nodes: list[int] = []
        for n, pr in enumerate(r.probes):
            for j, (key, c, lead) in enumerate((("tip", pr.tip, pr.tip_lead),
                                                ("ground", pr.ground, pr.ground_lead))):
                net, target = targets[2 * n + j]
                la = r.layers[c.layer]
                if target == "plane":
                    first = self.plane_node(la, c.at)
                else:
                    assert isinstance(target, tuple)
                    first = nodes.at(net, la, target[0], target[1])
                self.probe_contact_nodes.append(first)
                lead_net = f"probe:{pr.name.lower()}:{key}"
                nets.append(lead_net)
                ids = [first] + [nodes.new(lead_net, p, None) for p in lead.points[1:]]
                for k in range(len(ids) - 1):
                    segs.append(dict(net=lead_net, kind="probe", layer=None,
                                     start=lead.points[k], end=lead.points[k + 1],
                                     width=2 * lead.radius, thickness=2 * lead.radius,
                                     radius=lead.radius, inner=0.0, n0=ids[k], n1=ids[k + 1],
                                     source=f"probe[{pr.index}].{key}_lead",
                                     name=f"{pr.name} {key} lead"))
        return tuple(nets)

    def check_probe_contacts(self, nodes: tuple[Node, ...], segments: list[Segment],
                             pins: list[PinNode]) -> None:
        """A contact must be on copper that a pin connects to the circuit (else its
        leads would float, outside the circuit)."""
        if not self.r.probes:
            return
        parent = list(range(len(nodes)))

        def find(a: int) -> int:
            while parent[a] != a:
                parent[a] = parent[parent[a]]
                a = parent[a]
            return a

        for s in segments:
            if s.kind != "probe":
                ra, rb = find(s.node_from), find(s.node_to)
                if ra != rb:
                    parent[max(ra, rb)] = min(ra, rb)
        with_pin = {find(pn.node) for pn in pins}
        for n, pr in enumerate(self.r.probes):
            for j, key in enumerate(("tip", "ground")):
                node = self.probe_contact_nodes[2 * n + j]
                if find(node) not in with_pin:
                    raise RoutesError(
                        f"the {key} contact of probe {pr.name!r} lies on copper of net "
                        f"{nodes[node].net!r} that no pin connects to the circuit; put the "
                        f"contact on copper that carries the circuit's current", file=self.r.path,
                        line=pr.line, key=f"probe[{pr.index}].{key}.at")

    # -- connectivity ---------------------------------------------------
    def connectivity(self, nodes: tuple[Node, ...], segments: list[Segment],
                     pins: list[PinNode]) -> dict[str, int]:
        r = self.r
        parent = list(range(len(nodes)))

        def find(a: int) -> int:
            while parent[a] != a:
                parent[a] = parent[parent[a]]
                a = parent[a]
            return a

        for s in segments:
            ra, rb = find(s.node_from), find(s.node_to)
            if ra != rb:
                parent[max(ra, rb)] = min(ra, rb)

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

    def line_of(self, source: str) -> int | None:
        kind, _, rest = source.partition("[")
        idx = int(rest.partition("]")[0])
        if kind == "probe":
            return self.r.probes[idx].line
        entry = self.r.traces[idx] if kind == "trace" else self.r.vias[idx]
        return entry.line

    # -- images ---------------------------------------------------------
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


def _kind(k: object) -> SegmentKind:
    return "probe" if k == "probe" else ("trace" if k == "trace" else "via")


def _listing(items: list[str], most: int = 6) -> str:
    if len(items) <= most:
        return ", ".join(items)
    return ", ".join(items[:most]) + f" and {len(items) - most} more"


def _source_order(src: str) -> tuple[int, int]:
    kind, _, rest = src.partition("[")
    return (0 if kind == "trace" else 1, int(rest.rstrip("]")))


def _near_point(P: _Pieces, a: int, b: int) -> Point2:
    """A point of piece ``a`` near piece ``b`` (for messages)."""
    cand = []
    for ex, ey in ((P.ax[b], P.ay[b]), (P.bx[b], P.by[b])):
        t, d = project(np.array([ex]), np.array([ey]), P.ax[a:a + 1], P.ay[a:a + 1],
                       P.bx[a:a + 1], P.by[a:a + 1])
        tc = float(np.clip(t[0], 0, 1))
        cand.append((float(d[0]), float(P.ax[a] + tc * (P.bx[a] - P.ax[a])),
                     float(P.ay[a] + tc * (P.by[a] - P.ay[a]))))
    s, u, ok = crossings(P.ax[a:a + 1], P.ay[a:a + 1], P.bx[a:a + 1], P.by[a:a + 1],
                         P.ax[b:b + 1], P.ay[b:b + 1], P.bx[b:b + 1], P.by[b:b + 1])
    if ok[0] and 0 <= s[0] <= 1 and 0 <= u[0] <= 1:
        cand.append((0.0, float(P.ax[a] + s[0] * (P.bx[a] - P.ax[a])),
                     float(P.ay[a] + s[0] * (P.by[a] - P.ay[a]))))
    _, x, y = min(cand)
    return (x, y)


def _arrays(segments: list[Segment], nets: tuple[str, ...], mirror: np.ndarray) -> SegmentArrays:
    n = len(segments)
    net_index = {name: k for k, name in enumerate(nets)}
    return SegmentArrays(
        start=np.array([s.start for s in segments], dtype=float).reshape(n, 3),
        end=np.array([s.end for s in segments], dtype=float).reshape(n, 3),
        width=np.array([s.width for s in segments], dtype=float),
        thickness=np.array([s.thickness for s in segments], dtype=float),
        round=np.array([s.round for s in segments], dtype=bool),
        radius=np.array([s.radius for s in segments], dtype=float),
        inner_radius=np.array([s.inner_radius for s in segments], dtype=float),
        net_index=np.array([net_index[s.net] for s in segments], dtype=np.int64),
        node_from=np.array([s.node_from for s in segments], dtype=np.int64),
        node_to=np.array([s.node_to for s in segments], dtype=np.int64),
        mirror_z=mirror,
    )


def build_graph(routes: Routes, pin_nets: Sequence[str], *,
                anchor_pins: Mapping[str, int] | None = None) -> CopperGraph:
    """The copper graph of ``routes``; ``pin_nets[i]`` is the net of
    ``routes.pins[i]``. ``anchor_pins`` (optional) maps a net to the index of
    the pin that places its ``[nets.NAME] anchor`` (when the netlist resolved
    a spelling such as ``M1:1`` for a pin written ``M1:d``); without it the
    anchor is matched to a pin's terminal text, ignoring case.

    Raises :class:`RoutesError` (pins off their net, pins not reached from
    the anchor, an anchor that no pin places). See the module docstring for
    the rules.
    """
    return _Builder(routes, pin_nets, anchor_pins).run()


def _touching(layer_pairs: dict, own_kind: int) -> Iterator[tuple[int, int, int, int]]:
    """For each touching pair of items of one layer (box-pair sweep results:
    pair index arrays ``i``, ``j``, item ``kind`` (0 trace piece, 1 via, 2 pin)
    and ``ref`` (index within its kind)), seen from an item of ``own_kind``:
    (layer id, own ref, other kind, other ref)."""
    for lid, (i, j, kind, ref) in layer_pairs.items():
        for a, b in ((i, j), (j, i)):
            m = kind[a] == own_kind
            for own, other in zip(ref[a[m]].tolist(), b[m].tolist(), strict=True):
                yield lid, own, int(kind[other]), int(ref[other])
