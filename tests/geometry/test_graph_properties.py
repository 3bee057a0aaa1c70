"""Invariants of the copper graph on random boards (hypothesis).

* Total length is conserved when segments are split (T-junctions, crossings,
  pins, vias): the trace segments of each trace add up to its polyline.
* Every segment end is a node: a trace segment's ends are exactly its nodes'
  points; nodes carry the segment's net and layer.
* Each pin is a node of its net, on its layer, on the copper under the pin.
* A net built as one connected piece (every trace starts on copper of the
  net, directly or through a via) gives one connected graph, without island
  warnings.
"""

from __future__ import annotations

import json
import math
from typing import Any

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from geometry.graph import build_graph
from geometry.model import CopperGraph
from geometry.routes import parse_routes

MM = 1e-3
LAYERS = {
    "top": {"z": 1.565, "thickness": 0.035},
    "bottom": {"z": 0.0, "thickness": 0.035},
}
WIDTHS = [0.2, 0.5, 1.0]
VIA_D = 0.3

coord = st.integers(0, 12)


def _board(traces: list[dict[str, Any]], vias: list[dict[str, Any]],
           pins: list[dict[str, Any]]) -> dict[str, Any]:
    return {"format": "parasite-routes/1", "units": "mm", "layers": LAYERS,
            "trace": traces, "via": vias, "pin": pins}


def _load(board: dict[str, Any]):
    return parse_routes(json.dumps(board).encode(), "random.routes.json", "json")


@st.composite
def polyline_from(draw: st.DrawFn, start: tuple[float, float]) -> list[list[float]]:
    pts = [list(start)]
    for _ in range(draw(st.integers(1, 4))):
        p = [float(draw(coord)), float(draw(coord))]
        if math.dist(p, pts[-1]) > 0.01:
            pts.append(p)
    if len(pts) == 1:
        pts.append([start[0] + 1.0, start[1]])
    return pts


@st.composite
def connected_board(draw: st.DrawFn) -> tuple[dict[str, Any], list[str]]:
    """One net; every trace after the first starts on existing copper (a point
    at 0, 1/4, 1/2, 3/4 or 1 along a piece), on the same layer or through a via."""
    first = draw(polyline_from((float(draw(coord)), float(draw(coord)))))
    traces = [{"net": "a", "layer": "top", "width": draw(st.sampled_from(WIDTHS)), "points": first}]
    vias: list[dict[str, Any]] = []
    for _ in range(draw(st.integers(0, 5))):
        host = draw(st.sampled_from(traces))
        pts = host["points"]
        m = draw(st.integers(0, len(pts) - 2))
        t = draw(st.sampled_from([0.0, 0.25, 0.5, 0.75, 1.0]))
        a, b = pts[m], pts[m + 1]
        start = (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]))
        layer = host["layer"]
        if draw(st.booleans()):
            other = "bottom" if layer == "top" else "top"
            vias.append({"net": "a", "at": list(start), "from": layer, "to": other,
                         "diameter": VIA_D, "wall": 0.025})
            layer = other
        traces.append({"net": "a", "layer": layer, "width": draw(st.sampled_from(WIDTHS)),
                       "points": draw(polyline_from(start))})
    pins = []
    for k in range(draw(st.integers(1, 4))):
        host = draw(st.sampled_from(traces))
        pts = host["points"]
        m = draw(st.integers(0, len(pts) - 2))
        t = draw(st.sampled_from([0.0, 0.3, 0.5, 1.0]))
        a, b = pts[m], pts[m + 1]
        length = math.dist(a, b)
        off = draw(st.sampled_from([0.0, 0.4, -0.4])) * 0.5 * host["width"]
        nx, ny = -(b[1] - a[1]) / length, (b[0] - a[0]) / length
        at = [a[0] + t * (b[0] - a[0]) + off * nx, a[1] + t * (b[1] - a[1]) + off * ny]
        pins.append({"terminal": f"R{k + 1}:1", "at": at, "layer": host["layer"]})
    return _board(traces, vias, pins), ["a"] * len(pins)


@st.composite
def random_board(draw: st.DrawFn) -> dict[str, Any]:
    """Unconstrained polylines of one or two nets on two layers (crossings,
    overlaps, accidental T-junctions and islands all allowed)."""
    traces = []
    for _ in range(draw(st.integers(1, 6))):
        start = (float(draw(coord)), float(draw(coord)))
        traces.append({"net": draw(st.sampled_from(["a", "b"])),
                       "layer": draw(st.sampled_from(["top", "bottom"])),
                       "width": draw(st.sampled_from(WIDTHS)),
                       "points": draw(polyline_from(start))})
    return _board(traces, [], [])


def _check_common(board: dict[str, Any], g: CopperGraph) -> None:
    routes = g.routes
    # total length conserved, trace by trace
    for t in routes.traces:
        poly = sum(math.dist(p, q) for p, q in zip(t.points[:-1], t.points[1:], strict=True))
        segs = sum(s.length for s in g.segments if s.source == f"trace[{t.index}]")
        assert math.isclose(segs, poly, rel_tol=1e-9, abs_tol=1e-12), (t.index, segs, poly)
    # every segment end is a node of the segment's net (and layer, for bars)
    for s in g.segments:
        a, b = g.nodes[s.node_from], g.nodes[s.node_to]
        assert s.node_from != s.node_to and s.length > 0
        assert a.net == b.net == s.net
        if s.kind == "trace":
            assert a.point == s.start and b.point == s.end
            assert a.layer == b.layer == s.layer
        else:
            assert math.dist(a.point[:2], s.start[:2]) <= 0.5 * max(WIDTHS) * MM + routes.snap
    # no two nodes of one net and layer closer than snap
    seen: dict[tuple[str, str | None], list[tuple[float, float, float]]] = {}
    for n in g.nodes:
        pts = seen.setdefault((n.net, n.layer), [])
        assert all(math.dist(n.point, p) > routes.snap for p in pts)
        pts.append(n.point)
    # arrays agree with the segments
    assert len(g.arrays) == len(g.segments)
    assert [int(x) for x in g.arrays.node_from] == [s.node_from for s in g.segments]


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(connected_board())
def test_connected_junction_layouts(case: tuple[dict[str, Any], list[str]]) -> None:
    board, nets = case
    g = build_graph(_load(board), nets)
    _check_common(board, g)
    # each pin is a node of its net, on its layer, on the copper under it
    for pn in g.pins:
        node = g.nodes[pn.node]
        assert node.net == pn.net == "a" and node.layer == pn.pin.layer
        reach = 0.5 * max(WIDTHS) * MM + 0.5 * VIA_D * MM + g.routes.snap
        assert math.dist(node.point[:2], pn.pin.at) <= reach
    # one connected piece, no islands
    parent = {n.id: n.id for n in g.nodes}

    def find(x: int) -> int:
        while parent[x] != x:
            x = parent[x]
        return x

    for s in g.segments:
        parent[find(s.node_from)] = find(s.node_to)
    assert len({find(s.node_from) for s in g.segments}) == 1
    assert len({find(p.node) for p in g.pins} | {find(g.segments[0].node_from)}) == 1
    assert not any("island" in w for w in g.warnings)
    assert g.anchors == {"a": g.pins[0].node}


@settings(max_examples=150, deadline=None)
@given(random_board())
def test_random_polylines(board: dict[str, Any]) -> None:
    g = build_graph(_load(board), [])
    _check_common(board, g)
    again = build_graph(_load(board), [])
    assert again.segments == g.segments and again.nodes == g.nodes
    assert again.warnings == g.warnings
