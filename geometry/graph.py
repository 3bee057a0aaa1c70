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

from collections.abc import Mapping, Sequence

import numpy as np

from geometry.connectivity import _Connectivity
from geometry.graph_base import (
    _arrays,
    _kind,
    _NodeTable,
    _State,
    _ViaPlan,
)
from geometry.joins import _Joins
from geometry.model import (
    CopperGraph,
    Node,
    PinNode,
    Plane,
    Point2,
    Routes,
    Segment,
)
from geometry.probe_leads import _ProbeLeads
from geometry.spatial import box_pairs


class _Builder(_Joins, _ProbeLeads, _Connectivity, _State):
    """Builds the :class:`CopperGraph` of a routes file (see the module docstring)."""

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
        self.warn_dangling_vias(segments, pin_nodes, node_objs)
        self.check_probe_contacts(node_objs, segments, pin_nodes)
        self.nets = self.nets + probe_nets
        mirror = self.mirror(segments, planes)
        arrays = _arrays(segments, self.nets, mirror)
        return CopperGraph(routes=r, nets=self.nets, nodes=node_objs, segments=tuple(segments),
                           arrays=arrays, pins=tuple(pin_nodes), anchors=anchors, planes=planes,
                           warnings=tuple(self.warnings))


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
    if not routes.pours:
        return _Builder(routes, pin_nets, anchor_pins).run()
    from geometry.pour_graph import as_planes, mesh_pours_into  # pours: geometry/pour_graph.py
    builder = _Builder(as_planes(routes), pin_nets, anchor_pins)
    return mesh_pours_into(builder.run(), routes, builder.mirror)
