"""A board's copper as the entries of a routes file (:class:`Draft`).

Frame: the routes file's x is KiCad's x, its y is KiCad's y turned upward
(``y = origin_y - y_kicad``), both measured from the board's auxiliary axis
origin (``(setup (aux_axis_origin ...))``; the sheet corner when absent).
Layers: ``F.Cu`` -> ``top``, ``InN.Cu`` -> ``inN``, ``B.Cu`` -> ``bottom``.

What becomes what:

* each track (``segment``) is a two-point ``[[trace]]``; an ``arc`` a
  polyline whose chords stay within ``arc_tolerance`` of it;
* each via (through, blind, buried, micro) a ``[[via]]`` between its two
  layers: the plated hole, ``diameter`` = drill, ``wall`` = ``plating``;
  a plated through-hole pad is such a via too;
* a pad is a bar (:mod:`geometry.kicad.pads`) on each layer where a track of
  its net ends on it; a track ending on a pad or a via's ring away from its
  centre line gets a stub trace to it;
* a matched pad (see :mod:`geometry.kicad.netmap`) is a ``[[pin]]`` at its
  centre, on a layer where its copper is;
* zone fills on a layer named in ``planes`` make that layer an ideal return
  plane of the zone's node; every other filled island is a ``[[pour]]``
  (outline and rebuilt holes, simplified to within ``POUR_TOLERANCE``, clipped
  to ``area``), or left out, and said so, with ``skip_pours``.
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from geometry.kicad.board import Board, Pad, Track
from geometry.kicad.errors import BoardError
from geometry.kicad.netmap import NetMapping, PadTerminal, node_name_from
from geometry.kicad.pads import covered_by, foot_on_bar, inside_pad, pad_bar
from geometry.kicad.polygons import FillPolygon, arc_polyline
from geometry.model import canonical_net

Point = tuple[float, float]
DEFAULT_ARC_TOLERANCE = 5e-6  # m, largest distance of a chord from its arc
DEFAULT_PLATING = 25e-6  # m, via wall (common practice, from memory: IPC class 2 averages 20-25 um)
SNAP = 1e-9  # m
POUR_TOLERANCE = 50e-6
"""m: largest distance of a written pour's outline from the zone fill's (shapely's
topology-preserving simplification: a fill's arcs come as many short chords, and
every corner of a pour puts a line in its mesh)."""


def layer_name(kicad: str) -> str:
    if kicad == "F.Cu":
        return "top"
    if kicad == "B.Cu":
        return "bottom"
    return kicad[:-3].lower()


@dataclass(frozen=True)
class DraftTrace:
    net: str
    layer: str
    width: float
    points: tuple[Point, ...]
    name: str


@dataclass(frozen=True)
class DraftVia:
    net: str
    at: Point
    from_layer: str
    to_layer: str
    diameter: float
    wall: float | None
    name: str


@dataclass(frozen=True)
class DraftPour:
    net: str
    layer: str
    outline: tuple[Point, ...]
    holes: tuple[tuple[Point, ...], ...]
    name: str


@dataclass(frozen=True)
class DraftPin:
    terminal: str
    at: Point
    layer: str


@dataclass
class Draft:
    """Everything a routes file will hold, SI, in the routes frame."""

    layers: list[tuple[str, float, float, str | None]] = field(default_factory=list)  # name, z, t, plane
    traces: list[DraftTrace] = field(default_factory=list)
    vias: list[DraftVia] = field(default_factory=list)
    pins: list[DraftPin] = field(default_factory=list)
    pours: list[DraftPour] = field(default_factory=list)
    loops: list[tuple[str, tuple[str, ...], dict[str, str]]] = field(default_factory=list)
    net_names: dict[str, str] = field(default_factory=dict)  # board net -> node
    notes: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class Options:
    nets: Mapping[str, str | None] | None = None  # board net -> node (None: the mapped or made name)
    area: tuple[float, float, float, float] | None = None  # m, routes frame x0, y0, x1, y1
    planes: Sequence[str] = ()  # KiCad layer names
    skip_pours: bool = False
    arc_tolerance: float = DEFAULT_ARC_TOLERANCE
    plating: float = DEFAULT_PLATING
    loops: Sequence[tuple[str, tuple[str, ...], dict[str, str]]] = ()  # name, path, limit/frequency


def _choose_nets(board: Board, mapping: NetMapping | None, opts: Options) -> tuple[dict[str, str], list[str]]:
    notes: list[str] = []
    present = {t.net for t in board.tracks} | {v.net for v in board.vias} | {p.net for p in board.pads}
    present |= {z.net for z in board.zones}
    present.discard("")
    if opts.nets is not None:
        unknown = [n for n in opts.nets if n not in present]
        if unknown:
            raise BoardError(f"--nets names board nets that carry no copper: {', '.join(unknown)} "
                             f"(board nets: {', '.join(sorted(present))})", file=board.path)
    wanted = list(opts.nets) if opts.nets is not None else sorted(present)
    taken = set(mapping.nodes.values()) if mapping else set()
    out: dict[str, str] = {}
    for net in wanted:
        given = opts.nets.get(net) if opts.nets is not None else None
        if given is not None:
            if mapping is not None and net in mapping.nodes and mapping.nodes[net] != canonical_net(given):
                raise BoardError(f"--nets {net}={given}: the netlist's terminals put board net {net!r} "
                                 f"on node {mapping.nodes[net]!r}", file=board.path)
            out[net] = canonical_net(given)
            taken.add(out[net])
        elif mapping is None:
            out[net] = canonical_net(node_name_from(net, taken))
        elif net in mapping.nodes:
            out[net] = mapping.nodes[net]
        elif opts.nets is not None:
            out[net] = canonical_net(node_name_from(net, taken))
            notes.append(f"board net {net!r} meets no netlist terminal; imported as {out[net]!r} "
                         f"because --nets names it")
        else:
            notes.append(f"board net {net!r} meets no netlist terminal: left out (name it in "
                         f"--nets to import it under a name of its own)")
    return out, notes


def _inside(area: tuple[float, float, float, float] | None, pts: Sequence[Point]) -> bool:
    if area is None:
        return True
    x0, y0, x1, y1 = area
    return all(x0 <= x <= x1 and y0 <= y <= y1 for x, y in pts)


def _pours(net: str, layer: str, fill: FillPolygon, frame: Callable[[Point], Point],
           area: tuple[float, float, float, float] | None, name: str) -> list[DraftPour]:
    """One filled island as pours in the routes frame: simplified (``POUR_TOLERANCE``),
    clipped to ``area``; pieces of no area dropped."""
    import shapely
    from shapely.geometry import Polygon, box

    poly = Polygon([frame((float(x), float(y))) for x, y in fill.outline],
                   [[frame((float(x), float(y))) for x, y in h] for h in fill.holes])
    poly = shapely.make_valid(poly).simplify(POUR_TOLERANCE, preserve_topology=True)
    if area is not None:
        poly = poly.intersection(box(*area))
    parts = [g for g in getattr(poly, "geoms", [poly]) if isinstance(g, Polygon) and g.area > 0]
    out = []
    for k, g in enumerate(parts):
        g = shapely.geometry.polygon.orient(g)
        ring = tuple((float(x), float(y)) for x, y in g.exterior.coords[:-1])
        holes = tuple(tuple((float(x), float(y)) for x, y in h.coords[:-1]) for h in g.interiors)
        out.append(DraftPour(net, layer_name(layer), ring, holes,
                             name + (f", part {k + 1}" if len(parts) > 1 else "")))
    return out


def convert(board: Board, mapping: NetMapping | None, opts: Options) -> Draft:
    """The routes entries of ``board``'s copper (``mapping`` None: no netlist)."""
    ox, oy = board.origin

    def frame(p: Point) -> Point:
        return (p[0] - ox, oy - p[1])

    draft = Draft()
    nets, notes = _choose_nets(board, mapping, opts)
    draft.net_names = nets
    draft.notes.extend(mapping.notes if mapping else [])
    draft.notes.extend(notes)
    planes: dict[str, str | None] = {p: None for p in opts.planes}
    for name in planes:
        if name not in {la.name for la in board.layers}:
            raise BoardError(f"--plane {name}: no such copper layer (the board has "
                             f"{', '.join(la.name for la in board.layers)})", file=board.path)
    for zone in board.zones:
        for layer, fills in zone.fills.items():
            if not fills or zone.net not in nets:
                continue
            if layer in planes:
                node = nets[zone.net]
                if planes[layer] not in (None, node):
                    raise BoardError(f"--plane {layer}: zones of two nets fill the layer "
                                     f"({planes[layer]!r} and {node!r})", file=board.path, line=zone.line)
                planes[layer] = node
            elif opts.skip_pours:
                draft.notes.append(f"zone fill of net {zone.net!r} on {layer} (line {zone.line}) left "
                                   f"out (--no-pours)")
            else:
                for k, fill in enumerate(fills):
                    draft.pours.extend(_pours(nets[zone.net], layer, fill, frame, opts.area,
                                              f"{zone.net} on {layer}, board line {zone.line}"
                                              + (f", island {k + 1}" if len(fills) > 1 else "")))
    for name, plane_node in planes.items():
        if plane_node is None:
            raise BoardError(f"--plane {name}: no filled zone of an imported net on that layer",
                             file=board.path)
    for la in board.layers:
        draft.layers.append((layer_name(la.name), la.z, la.thickness, planes.get(la.name)))

    # -- tracks ----------------------------------------------------------------------------------
    kept: list[Track] = []
    skipped = 0
    for t in board.tracks:
        if t.net not in nets or not _inside(opts.area, [frame(t.start), frame(t.end)]):
            continue
        if t.layer in planes:
            raise BoardError(f"a track of net {t.net!r} runs on {t.layer}, named a plane by --plane",
                             file=board.path, line=t.line)
        if math.dist(t.start, t.end) <= SNAP and t.mid is None:
            skipped += 1
            continue
        kept.append(t)
        if t.mid is None:
            pts = [t.start, t.end]
        else:
            pts = arc_polyline(t.start, t.mid, t.end, opts.arc_tolerance)
        draft.traces.append(DraftTrace(nets[t.net], layer_name(t.layer), t.width,
                                       tuple(frame(p) for p in pts), f"{t.net}, board line {t.line}"))
    if skipped:
        draft.notes.append(f"{skipped} track(s) of zero length left out")
    ends: dict[tuple[str, str], list[tuple[Point, float]]] = defaultdict(list)
    heading: dict[tuple[str, str], list[Point]] = defaultdict(list)  # unit direction at each end
    for t in kept:
        ends[(t.net, t.layer)] += [(t.start, t.width), (t.end, t.width)]
        a, b = (t.start, t.end) if t.mid is None else (t.start, t.mid)
        c, d = (t.start, t.end) if t.mid is None else (t.mid, t.end)
        heading[(t.net, t.layer)] += [_unit(a, b), _unit(c, d)]

    def stub(net: str, layer: str, p: Point, q: Point, width: float, what: str) -> None:
        if math.dist(p, q) > 1e-7:
            draft.traces.append(DraftTrace(nets[net], layer_name(layer), width,
                                           (frame(p), frame(q)), f"stub to {what}"))

    # -- vias --------------------------------------------------------------------------------------
    names = [la.name for la in board.layers]
    for v in board.vias:
        if v.net not in nets or not _inside(opts.area, [frame(v.at)]):
            continue
        wall = opts.plating if opts.plating < 0.5 * v.drill else None
        draft.vias.append(DraftVia(nets[v.net], frame(v.at), layer_name(v.layers[0]),
                                   layer_name(v.layers[1]), v.drill, wall,
                                   f"{v.kind} via, board line {v.line}"))
        span = names[names.index(v.layers[0]): names.index(v.layers[1]) + 1]
        for layer in span:
            for p, width in ends.get((v.net, layer), []):
                if 1e-7 < math.dist(p, v.at) <= 0.5 * v.size:
                    stub(v.net, layer, p, v.at, width, f"via line {v.line}")

    # -- pads ---------------------------------------------------------------------------------------
    pad_layer: dict[int, str] = {}  # id(pad) -> layer of its pin
    for pad in board.pads:
        if pad.net not in nets or not _inside(opts.area, [frame(pad.at)]):
            continue
        bar = pad_bar(pad)
        for layer in pad.layers:
            found = ends.get((pad.net, layer), [])
            if not found:
                continue
            hit = inside_pad(pad, np.array([p for p, _ in found]))
            if not hit.any():
                continue
            pad_layer.setdefault(id(pad), layer)
            hits = [found[k] for k in np.flatnonzero(hit)]
            feet = [foot_on_bar(p, bar) for p, _ in hits]
            axis = _unit(bar[0], bar[1])
            dirs = [heading[(pad.net, layer)][i] for i in np.flatnonzero(hit)]
            along = any(abs(h[0] * axis[1] - h[1] * axis[0]) < 1e-3 for h in dirs)
            needs_stub = any(math.dist(p, q) > 1e-7 for (p, _), q in zip(hits, feet, strict=True))
            if along and not needs_stub:
                continue  # a track lies along the bar: the bar would only double its copper
            draft.traces.append(DraftTrace(nets[pad.net], layer_name(layer), bar[2],
                                           (frame(bar[0]), frame(bar[1])),
                                           f"pad {pad.reference}.{pad.number}"))
            for (p, w), q in zip(hits, feet, strict=True):
                stub(pad.net, layer, p, q, w, f"pad {pad.reference}.{pad.number}")
        if pad.drill is not None and len(pad.layers) >= 2:
            wall = opts.plating if opts.plating < 0.5 * pad.drill else None
            draft.vias.append(DraftVia(nets[pad.net], frame(pad.at), layer_name(pad.layers[0]),
                                       layer_name(pad.layers[-1]), pad.drill, wall,
                                       f"plated hole of pad {pad.reference}.{pad.number}"))
            pad_layer.setdefault(id(pad), pad.layers[0])
        if id(pad) not in pad_layer:
            covering = _covering_layer(pad, kept, board)
            if covering is not None:
                pad_layer[id(pad)] = covering
    if mapping is not None:
        _pins(draft, mapping.terminals, nets, pad_layer, frame)
    draft.loops.extend(opts.loops)
    return draft


def _unit(a: Point, b: Point) -> Point:
    d = math.dist(a, b)
    return (0.0, 0.0) if d == 0 else ((b[0] - a[0]) / d, (b[1] - a[1]) / d)


def _covering_layer(pad: Pad, kept: list[Track], board: Board) -> str | None:
    """A layer of the pad on which a straight track of its net covers its centre,
    or a via of its net sits at its centre."""
    for layer in pad.layers:
        segs = [t for t in kept if t.net == pad.net and t.layer == layer and t.mid is None]
        if segs and covered_by(pad.at, np.array([t.start for t in segs]), np.array([t.end for t in segs]),
                               np.array([t.width for t in segs])):
            return layer
    for v in board.vias:
        if v.net == pad.net and math.dist(v.at, pad.at) <= SNAP:
            return v.layers[0]
    return None


def _pins(draft: Draft, terminals: list[PadTerminal], nets: Mapping[str, str],
          pad_layer: Mapping[int, str], frame: object) -> None:
    placed: dict[tuple[str, int], PadTerminal] = {}
    for pt in terminals:
        if pt.pad.net not in nets:
            continue
        if id(pt.pad) not in pad_layer:
            draft.notes.append(f"pad {pt.pad.reference}.{pt.pad.number} ({pt.terminal}) has no imported "
                               f"copper reaching it: no pin")
            continue
        key = (pt.element.name.lower(), pt.index)
        if key in placed:
            draft.notes.append(f"pad {pt.pad.reference}.{pt.pad.number} is terminal {pt.terminal} too; "
                               f"its pin is at pad {placed[key].pad.number}")
            continue
        placed[key] = pt
        at = frame(pt.pad.at)  # type: ignore[operator]
        draft.pins.append(DraftPin(pt.terminal, at, layer_name(pad_layer[id(pt.pad)])))
