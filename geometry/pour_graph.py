"""Pours in the copper graph: every ``[[pour]]`` meshed into current cells
(:mod:`geometry.mesh`) and joined to the traces, vias and pins that touch it.

How (part of :func:`geometry.graph.build_graph`):

1. The graph is first built with every layer that holds a pour treated as a
   return plane of the pour's net (a layer already marked ``plane`` stays
   so): vias of the net end on the layer's plane node, pins on the layer join
   it, exactly as for an ideal plane.
2. Each pour is meshed on its layer with grid lines through every point where
   current enters it (the vias and pins on that node, the trace ends and
   vertices of its net on its layer that lie on the copper), so the mesh is
   graded around them (cells a quarter of the interior size there,
   :data:`geometry.mesh.FINE_RATIO`). The centre lines of traces over the
   pour are not refined by default: on a real board they would fill the pour
   with fine cells (the imported buck fixture's 25 x 15 mm pour: 3,500 cells
   bare, 8,100 with them); give a smaller ``cell`` where the return under a
   trace matters.
3. The plane node is replaced by the mesh: a via or pin joins the mesh node
   nearest its centre (a grid crossing lies on it when it is on the copper),
   a trace node on the pour is the mesh node at that point. The cells become
   segments of kind ``"cell"`` (bars, ``source`` ``pour[i]``).
4. The layer is no longer an ideal plane: nothing is imaged in it (ideal
   planes on other layers still image the cells). A plane layer without a
   pour stays the ideal infinite plane.

Limits: the pours of one layer must share one net and must not overlap
(merge them into one outline), and a layer with a pour
carries no trace or pin of another net (not supported yet: an error names
the entry); a via passing through a pour layer on the pour joins it (its
clearance is not modelled), off the pour it gets a node of its own there; a
pin off the pour on such a layer must sit on a trace's end or vertex; a trace
running over a pour of its own net on the same layer joins it at its ends and
vertices only (the trace's copper is counted beside the pour's, not merged).
SI units (metres).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence

import numpy as np
from shapely.geometry import Point

from geometry.errors import RoutesError
from geometry.graph_base import _arrays
from geometry.mesh import PourMesh, mesh_pour
from geometry.model import UNIT_SCALE, CopperGraph, Node, PinNode, Routes, Segment
from geometry.pour import Pour


def pour_layers(routes: Routes) -> dict[str, str]:
    """Layer name -> the net of its pours; an error when one layer holds pours
    of two nets."""
    out: dict[str, str] = {}
    for p in routes.pours:
        if out.setdefault(p.layer, p.net) != p.net:
            raise RoutesError(
                f"layer {p.layer!r} holds pours of nets {out[p.layer]!r} and {p.net!r}; pours of "
                f"several nets on one layer are not supported yet (put each net's pour on its own "
                f"layer)", file=routes.path, line=p.line, key=f"{p.key}.net")
    for k, p in enumerate(routes.pours):
        for q in routes.pours[:k]:
            if q.layer == p.layer and p.polygon.intersection(q.polygon).area > 1e-9 * p.polygon.area:
                raise RoutesError(
                    f"{p.key} overlaps {q.key} (same net, same layer); they would be meshed as two "
                    f"separate sheets: merge them into one outline", file=routes.path, line=p.line,
                    key=f"{p.key}.outline")
    for t in routes.traces:
        if t.layer in out and t.net != out[t.layer] and routes.layers[t.layer].plane is None:
            p = next(q for q in routes.pours if q.layer == t.layer)
            raise RoutesError(
                f"layer {t.layer!r} holds a pour of net {p.net!r} and trace[{t.index}] of net "
                f"{t.net!r}; a pour beside other nets' copper on one layer is not supported yet "
                f"(clearances are not cut): put the pour on a layer of its own",
                file=routes.path, line=p.line, key=f"{p.key}.layer")
    return out


def as_planes(routes: Routes) -> Routes:
    """The routes with every pour layer marked as a return plane of its pour's net
    (step 1 of the module docstring)."""
    nets = pour_layers(routes)
    layers = {n: dataclasses.replace(la, plane=nets[n]) if n in nets else la
              for n, la in routes.layers.items()}
    return dataclasses.replace(routes, layers=layers)


def mesh_pours_into(graph: CopperGraph, routes: Routes, mirror: object) -> CopperGraph:
    """Replace the plane nodes of the pour layers of ``graph`` (built from
    :func:`as_planes` of ``routes``) by the pours' meshes (module docstring).
    ``mirror(segments, planes)`` recomputes the image faces."""
    layer_net = pour_layers(routes)
    plane_node = {pl.layer: pl.node for pl in graph.planes if pl.layer in layer_net}
    snap = routes.snap
    nodes = list(graph.nodes)
    segments = list(graph.segments)

    # attachment points per pour layer: (x, y) of vias and pins on the plane node
    # and trace nodes of the net on the layer
    attach: dict[str, list[tuple[float, float]]] = {n: [] for n in layer_net}
    for s in segments:
        for nid, pt in ((s.node_from, s.start), (s.node_to, s.end)):
            for layer, pid in plane_node.items():
                if nid == pid:
                    attach[layer].append((pt[0], pt[1]))
    for pn in graph.pins:
        for layer, pnode in plane_node.items():
            if pn.node == pnode:
                attach[layer].append(pn.pin.at)
    trace_nodes: dict[str, list[int]] = {n: [] for n in layer_net}
    for nd in nodes:
        if not nd.plane and nd.layer in layer_net and nd.net == layer_net[nd.layer]:
            trace_nodes[nd.layer].append(nd.id)
            attach[nd.layer].append((nd.point[0], nd.point[1]))

    meshes: list[tuple[Pour, PourMesh, int]] = []  # pour, mesh, global id of its local node 0
    next_id = len(nodes)
    for pour in routes.pours:
        poly = pour.polygon
        near = poly.buffer(snap)
        pts = [p for p in attach[pour.layer] if near.covers(Point(p))]
        mesh = mesh_pour(pour, routes.layers[pour.layer], refine=pts)
        meshes.append((pour, mesh, next_id))
        for k in range(mesh.n_nodes):
            x, y = mesh.node_xy[k]
            nodes.append(Node(id=next_id + k, net=pour.net, point=(float(x), float(y), mesh.z),
                              layer=pour.layer))
        next_id += mesh.n_nodes

    warnings: list[str] = []
    own_nodes: dict[str, list[int]] = {layer: ids for layer, ids in trace_nodes.items()}

    def join(layer: str, xy: Sequence[float], what: str) -> int:
        """Global id of the node that copper at ``xy`` on ``layer`` joins: the
        nearest mesh node of the pour under it; off every pour, a trace node of
        the net there (signal layer) or the nearest mesh node with a warning
        (plane layer)."""
        pt = Point(xy)
        cands = [(pour.polygon.distance(pt), off + mesh.nearest_node(xy), pour)
                 for pour, mesh, off in meshes if pour.layer == layer]
        d, nid, pour = min(cands, key=lambda c: (c[0], c[1]))
        if d <= snap:
            return nid
        for tid in own_nodes[layer]:
            tx, ty, _ = nodes[tid].point
            if math.hypot(tx - xy[0], ty - xy[1]) <= snap:
                return tid
        if what.startswith("via[") and routes.layers[layer].plane is None:
            # a via off the pour: its own node on the layer, as without a pour
            nodes.append(Node(id=len(nodes), net=pour.net,
                              point=(float(xy[0]), float(xy[1]), routes.layers[layer].mid),
                              layer=layer))
            own_nodes[layer].append(len(nodes) - 1)
            return len(nodes) - 1
        if routes.layers[layer].plane is None:
            raise RoutesError(
                f"{what} at [{xy[0] / _scale(routes):.6g}, {xy[1] / _scale(routes):.6g}] "
                f"{routes.units} on layer {layer!r} lies off the pour and off any trace end of net "
                f"{pour.net!r}; on a layer with a pour, copper of the net off the pour joins only "
                f"at a trace's end or vertex (not supported yet elsewhere)",
                file=routes.path, line=pour.line, key=f"{pour.key}.outline")
        warnings.append(f"{routes.path}:{pour.line}: warning: {pour.key}: {what} lies "
                        f"{d / _scale(routes):.6g} {routes.units} off the pour on plane layer "
                        f"{layer!r}; it joins the pour's nearest node")
        return nid

    # trace nodes on a pour become (are merged with) its mesh node
    remap: dict[int, int] = {}
    for layer, ids in trace_nodes.items():
        for nid in ids:
            x, y, _ = nodes[nid].point
            for pour, mesh, off in meshes:
                if pour.layer == layer and pour.polygon.buffer(snap).covers(Point(x, y)):
                    remap[off + mesh.nearest_node((x, y))] = nid
                    break
    node_of_plane = {pn: layer for layer, pn in plane_node.items()}

    def new_id(nid: int, xy: Sequence[float], what: str) -> int:
        if nid in node_of_plane:
            nid = join(node_of_plane[nid], xy, what)
        return remap.get(nid, nid)

    out: list[Segment] = []
    for s in segments:
        out.append(dataclasses.replace(s, node_from=new_id(s.node_from, s.start[:2], s.source),
                                       node_to=new_id(s.node_to, s.end[:2], s.source)))
    counters: dict[str, int] = {}
    for s in out:
        counters[s.net] = counters.get(s.net, 0) + 1
    for pour, mesh, off in meshes:
        for k in range(mesh.n_cells):
            counters[pour.net] = counters.get(pour.net, 0) + 1
            a, b = int(mesh.node_from[k]) + off, int(mesh.node_to[k]) + off
            out.append(Segment(
                index=len(out), id=f"{pour.net}.{counters[pour.net]}", net=pour.net, kind="cell",
                layer=pour.layer, start=tuple(float(v) for v in mesh.start[k]),  # type: ignore[arg-type]
                end=tuple(float(v) for v in mesh.end[k]),  # type: ignore[arg-type]
                width=float(mesh.width[k]), thickness=mesh.thickness, radius=0.0,
                inner_radius=0.0, node_from=remap.get(a, a), node_to=remap.get(b, b),
                source=pour.key, name=pour.name))
    pins = [dataclasses.replace(pn, node=new_id(pn.node, pn.pin.at, f"pin {pn.pin.terminal!r}"))
            for pn in graph.pins]
    anchors = _anchors(graph.anchors, graph.pins, pins)
    graph = dataclasses.replace(graph, warnings=graph.warnings + tuple(warnings))
    return _compact(graph, routes, nodes, out, pins, anchors, set(plane_node.values()), mirror)


def _scale(routes: Routes) -> float:
    return UNIT_SCALE[routes.units]


def _anchors(old: Mapping[str, int], old_pins: Sequence[PinNode],
             new_pins: Sequence[PinNode]) -> dict[str, int]:
    out = {}
    for net, nid in old.items():
        out[net] = next((b.node for a, b in zip(old_pins, new_pins, strict=True)
                         if a.node == nid and a.net == net), nid)
    return out


def _compact(graph: CopperGraph, routes: Routes, nodes: list[Node], segments: list[Segment],
             pins: list[PinNode], anchors: dict[str, int], dropped: set[int],
             mirror: object) -> CopperGraph:
    """Drop the replaced plane nodes and the merged mesh nodes; renumber."""
    used = {s.node_from for s in segments} | {s.node_to for s in segments}
    used |= {pn.node for pn in pins} | set(anchors.values())
    keep = [nd for nd in nodes if nd.id in used or (nd.id < len(graph.nodes) and nd.id not in dropped)]
    new = {nd.id: k for k, nd in enumerate(keep)}
    node_objs = tuple(dataclasses.replace(nd, id=new[nd.id]) for nd in keep)
    segs = [dataclasses.replace(s, index=k, node_from=new[s.node_from], node_to=new[s.node_to])
            for k, s in enumerate(segments)]
    pins = [dataclasses.replace(pn, node=new[pn.node]) for pn in pins]
    planes = tuple(pl for pl in graph.planes if pl.node not in dropped)
    mirror_z = mirror(segs, planes)  # type: ignore[operator]
    return dataclasses.replace(
        graph, routes=routes, nodes=node_objs, segments=tuple(segs),
        arrays=_arrays(segs, graph.nets, mirror_z), pins=tuple(pins),
        anchors={net: new[n] for net, n in anchors.items()}, planes=planes)


def cell_mask(graph: CopperGraph) -> np.ndarray:
    """(N,) bool: the segments that are cells of a pour."""
    return np.array([s.kind == "cell" for s in graph.segments], dtype=bool)


__all__ = ["as_planes", "cell_mask", "mesh_pours_into", "pour_layers"]
