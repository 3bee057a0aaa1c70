"""The copper graph builder's parts: the straight pieces of the traces, the
node table, the builder's state and messages, and small helpers shared by
the joins (:mod:`geometry.joins`), the probe leads
(:mod:`geometry.probe_leads`) and the connectivity checks
(:mod:`geometry.connectivity`). :mod:`geometry.graph` assembles them.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from geometry.errors import RoutesError
from geometry.model import (
    UNIT_SCALE,
    Layer,
    Pin,
    Point2,
    Routes,
    Segment,
    SegmentArrays,
    SegmentKind,
    canonical_net,
)
from geometry.spatial import crossings, project


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


class _State:
    """What every part of the builder shares: the routes, the nets and layers,
    the messages, and the pieces and nodes made so far."""

    # set while building (see _Builder.run)
    P: _Pieces
    length: np.ndarray
    splits: Any
    nodes: _NodeTable
    plane_nodes: dict[str, int]
    probe_contact_nodes: list[int]

    def __init__(self, routes: Routes, pin_nets: Sequence[str],
                 anchor_pins: Mapping[str, int] | None) -> None:
        if len(pin_nets) != len(routes.pins):
            raise ValueError(f"pin_nets has {len(pin_nets)} entries for {len(routes.pins)} pins")
        self.r = routes
        self.snap = routes.snap
        self.scale = UNIT_SCALE[routes.units]
        self.pin_nets = [canonical_net(n) for n in pin_nets]
        self.anchor_pins = anchor_pins
        self.warnings: list[str] = list(routes.warnings)
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

    def fmt_len(self, metres: float) -> str:
        return f"{metres / self.scale:.6g} {self.r.units}"

    def fmt_pt(self, x: float, y: float) -> str:
        return f"[{x / self.scale:.6g}, {y / self.scale:.6g}] {self.r.units}"

    def warn(self, key: str, line: int | None, message: str) -> None:
        where = f"{self.r.path}:{line}" if line is not None else self.r.path
        self.warnings.append(f"{where}: warning: {key}: {message}")

    def pin_error(self, pin: Pin, message: str) -> RoutesError:
        return RoutesError(message, file=self.r.path, line=pin.line, key=f"pin[{pin.index}].at")

    def line_of(self, source: str) -> int | None:
        kind, _, rest = source.partition("[")
        idx = int(rest.partition("]")[0])
        if kind == "probe":  # by the entry's index: a run may attach some probes only
            return next((p.line for p in self.r.probes if p.index == idx), None)
        entry = self.r.traces[idx] if kind == "trace" else self.r.vias[idx]
        return entry.line

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

    def plane_node(self, layer: Layer, at: Point2 | None) -> int:
        if layer.name not in self.plane_nodes:
            assert layer.plane is not None
            x, y = at if at is not None else (0.0, 0.0)
            self.plane_nodes[layer.name] = self.nodes.new(layer.plane, (x, y, layer.mid),
                                                          layer.name, plane=True)
        return self.plane_nodes[layer.name]

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
