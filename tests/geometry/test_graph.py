"""The copper graph of the fixture boards. Every expected number is worked out
by hand from the fixture's coordinates (stated beside each check)."""

from __future__ import annotations

import math
from collections import Counter

import numpy as np
import pytest

from geometry.graph import build_graph
from geometry.model import CopperGraph
from geometry.routes import load_routes, parse_routes
from tests.boards import ROOT

ROOT = ROOT
ROUTES = ROOT / "fixtures" / "routes"
MM = 1e-3


def graph(name: str, nets: list[str]) -> CopperGraph:
    return build_graph(load_routes(ROUTES / name), nets)


def degree(g: CopperGraph) -> Counter[int]:
    c: Counter[int] = Counter()
    for s in g.segments:
        c[s.node_from] += 1
        c[s.node_to] += 1
    return c


def components(g: CopperGraph) -> list[set[int]]:
    adj: dict[int, set[int]] = {n.id: set() for n in g.nodes}
    for s in g.segments:
        adj[s.node_from].add(s.node_to)
        adj[s.node_to].add(s.node_from)
    seen: set[int] = set()
    out = []
    for start in adj:
        if start in seen:
            continue
        comp, stack = set(), [start]
        while stack:
            n = stack.pop()
            if n in comp:
                continue
            comp.add(n)
            stack.extend(adj[n] - comp)
        seen |= comp
        out.append(comp)
    return out


def test_t_junction() -> None:
    """Bus (0,0)-(10,0), branch from (5,0) to (5,5): three 5 mm segments meeting
    at (5,0)."""
    g = graph("t_junction.routes.toml", ["a", "a", "a"])
    assert [s.id for s in g.segments] == ["a.1", "a.2", "a.3"]
    assert [s.source for s in g.segments] == ["trace[0]", "trace[0]", "trace[1]"]
    assert [s.name for s in g.segments] == ["bus", "bus", "branch"]
    np.testing.assert_allclose(g.arrays.length, [5 * MM] * 3, rtol=1e-12)
    junction = [n for n, d in degree(g).items() if d == 3]
    assert len(junction) == 1
    assert g.nodes[junction[0]].point[:2] == pytest.approx((5 * MM, 0.0))
    assert len(g.nodes) == 4 and len(components(g)) == 1
    assert g.warnings == ()
    # the branch's start is the junction; segments keep the polyline direction
    assert g.segments[2].node_from == junction[0]
    assert g.segments[2].end[:2] == pytest.approx((5 * MM, 5 * MM))


def test_json_board_gives_the_same_graph() -> None:
    a = graph("t_junction.routes.toml", ["a", "a", "a"])
    b = graph("t_junction.routes.json", ["a", "a", "a"])
    assert [(s.id, s.start, s.end, s.node_from, s.node_to) for s in a.segments] == [
        (s.id, s.start, s.end, s.node_from, s.node_to) for s in b.segments
    ]
    assert a.nodes == b.nodes


def test_pin_inside_width_splits_the_segment() -> None:
    """Pin at (4, 0.5) on a 2 mm trace (0,0)-(10,0): split at (4, 0), 4 mm + 6 mm."""
    g = graph("pin_mid_segment.routes.toml", ["a", "a", "a"])
    np.testing.assert_allclose(g.arrays.length, [4 * MM, 6 * MM], rtol=1e-12)
    c1 = g.pins[1]
    assert c1.pin.terminal == "C1:1"
    assert g.nodes[c1.node].point[:2] == pytest.approx((4 * MM, 0.0))
    assert g.segments[0].node_to == c1.node == g.segments[1].node_from


def test_via_through_four_layers() -> None:
    """Mid-planes (bottom face + half of 35 um): top 1.5825 mm, in1 1.2175 mm,
    in2 0.4175 mm, bottom 0.0175 mm. The via joins all four (trace ends on top,
    a trace passing through on in1, a pin on in2, a trace start on bottom)."""
    g = graph("via_stack.routes.toml", ["a"] * 4)
    vias = [s for s in g.segments if s.kind == "via"]
    assert [s.layer for s in vias] == ["top-in1", "in1-in2", "in2-bottom"]
    z = [(s.start[2], s.end[2]) for s in vias]
    assert z == [pytest.approx((1.5825 * MM, 1.2175 * MM)), pytest.approx((1.2175 * MM, 0.4175 * MM)),
                 pytest.approx((0.4175 * MM, 0.0175 * MM))]
    for s in vias:
        assert s.start[:2] == s.end[:2] == pytest.approx((5 * MM, 0.0))
        assert s.radius == pytest.approx(0.15 * MM) and s.inner_radius == pytest.approx(0.125 * MM)
        assert s.round and s.width == s.thickness == pytest.approx(0.3 * MM)
    # the in1 trace (3,0)-(8,0) is split at the via: 2 mm + 3 mm
    in1 = [s.length for s in g.segments if s.layer == "in1"]
    assert in1 == [pytest.approx(2 * MM), pytest.approx(3 * MM)]
    assert vias[0].node_from == g.segments[0].node_to  # top trace's end
    assert vias[1].node_to == g.pins[2].node  # the pin on in2
    assert vias[2].node_to == g.segments[3].node_from  # bottom trace's start
    assert len(components(g)) == 1 and g.warnings == ()
    assert [s.id for s in g.segments] == [f"a.{k}" for k in range(1, 8)]


def test_via_skips_a_layer_without_copper() -> None:
    text = """format = "parasite-routes/1"
units = "mm"
[layers.top]
z = 1.5
thickness = 0.1
[layers.mid]
z = 0.8
thickness = 0.1
[layers.bottom]
z = 0
thickness = 0.1
[[trace]]
net = "a"
layer = "top"
width = 1
points = [[0, 0], [5, 0]]
[[via]]
net = "a"
at = [5, 0]
from = "bottom"
to = "top"
diameter = 0.4
[[pin]]
terminal = "R1:1"
at = [0, 0]
layer = "top"
"""
    g = build_graph(parse_routes(text.encode(), "x.routes.toml", "toml"), ["a"])
    (via,) = [s for s in g.segments if s.kind == "via"]
    # oriented from "from" (bottom, mid 0.05 mm) toward "to" (top, mid 1.55 mm)
    assert via.layer == "bottom-top"
    assert (via.start[2], via.end[2]) == pytest.approx((0.05 * MM, 1.55 * MM))
    assert via.inner_radius == 0.0  # no wall: solid barrel


def test_plane_net() -> None:
    """Plane layer gnd: faces 1.0 and 1.035 mm. Top traces lie above it and are
    imaged at its top face; both via segments touch it and are not imaged."""
    g = graph("plane_net.routes.toml", ["vin", "vin", "0", "0"])
    assert g.nets == ("vin", "0")
    (plane,) = g.planes
    assert (plane.net, plane.layer) == ("0", "gnd")
    assert (plane.z_bottom, plane.z_top) == pytest.approx((1.0 * MM, 1.035 * MM))
    assert g.nodes[plane.node].plane and g.nodes[plane.node].net == "0"
    kinds = [s.kind for s in g.segments]
    assert kinds == ["trace", "trace", "via", "via"]
    mz = g.arrays.mirror_z
    assert mz[:2] == pytest.approx([1.035 * MM, 1.035 * MM])
    assert np.isnan(mz[2:]).all()
    top_gnd, gnd_bottom = g.segments[2], g.segments[3]
    assert top_gnd.node_to == plane.node == gnd_bottom.node_from
    assert top_gnd.end[2] == pytest.approx(1.0175 * MM)  # the plane layer's mid-plane
    v1n = g.pins[3]
    assert v1n.pin.terminal == "V1:n" and v1n.node == plane.node
    assert g.anchors == {"vin": g.pins[0].node, "0": g.pins[2].node}
    # V1:n reaches R1:2 through the plane and the via
    comp = next(c for c in components(g) if plane.node in c)
    assert g.pins[2].node in comp


def test_mirror_skips_a_plane_that_a_via_crosses() -> None:
    """A via of net a passes the plane of net 0 without joining it: the segment
    crosses the plane, so it is not imaged in it. The bottom trace is below the
    plane: imaged at its bottom face (1.0 mm)."""
    text = """format = "parasite-routes/1"
units = "mm"
[layers.top]
z = 1.565
thickness = 0.035
[layers.gnd]
z = 1.0
thickness = 0.035
plane = "0"
[layers.bottom]
z = 0
thickness = 0.035
[[trace]]
net = "a"
layer = "top"
width = 1
points = [[0, 0], [5, 0]]
[[trace]]
net = "a"
layer = "bottom"
width = 1
points = [[5, 0], [9, 0]]
[[via]]
net = "a"
at = [5, 0]
from = "top"
to = "bottom"
diameter = 0.3
[[pin]]
terminal = "R1:1"
at = [0, 0]
layer = "top"
[[pin]]
terminal = "R1:2"
at = [9, 0]
layer = "bottom"
"""
    g = build_graph(parse_routes(text.encode(), "x.routes.toml", "toml"), ["a", "a"])
    assert [s.layer for s in g.segments] == ["top", "bottom", "top-bottom"]
    mz = g.arrays.mirror_z
    assert mz[0] == pytest.approx(1.035 * MM) and mz[1] == pytest.approx(1.0 * MM)
    assert math.isnan(mz[2])
    assert g.warnings == ()


def test_two_planes_use_the_nearest_with_a_warning() -> None:
    """sig mid-plane 0.5825 mm; p1's lower face 0.8 mm is 0.2175 mm away, p2's
    upper face 0.235 mm is 0.3475 mm away: imaged at 0.8 mm."""
    g = graph("two_planes.routes.toml", ["s"])
    assert g.arrays.mirror_z[0] == pytest.approx(0.8 * MM)
    (w,) = g.warnings
    assert "traces on layer 'sig' lie between two return planes" in w and "'p1'" in w
    assert w.startswith(f"{ROUTES / 'two_planes.routes.toml'}:21: warning: trace[0]: ")


def test_island_warning() -> None:
    g = graph("island.routes.toml", ["a", "a"])
    (w,) = g.warnings
    assert "copper island of net 'a' (trace[1]) is connected to no pin" in w
    assert len(components(g)) == 2


def test_overlapping_nets_warning() -> None:
    """2 mm wide traces 1 mm apart: the copper overlaps by 1 mm."""
    g = graph("overlapping_nets.routes.toml", ["a", "b"])
    (w,) = g.warnings
    assert "copper of net 'a' overlaps copper of net 'b' (trace[1]) on layer 'top'" in w
    assert g.nets == ("a", "b") and list(g.arrays.net_index) == [0, 1]


def test_crossing_traces_of_one_net_are_joined() -> None:
    g = graph("crossing.routes.toml", ["a"])
    np.testing.assert_allclose(g.arrays.length, [5 * MM] * 4, rtol=1e-12)
    (centre,) = [n for n, d in degree(g).items() if d == 4]
    assert g.nodes[centre].point[:2] == pytest.approx((5 * MM, 0.0))
    assert len(components(g)) == 1


def test_anchor_option() -> None:
    g = graph("anchor.routes.toml", ["a", "a"])
    assert g.anchors == {"a": g.pins[1].node}
    assert g.nodes[g.anchors["a"]].point[:2] == pytest.approx((10 * MM, 10 * MM))
    # the netlist may resolve the anchor to a pin written differently
    g2 = build_graph(load_routes(ROUTES / "anchor.routes.toml"), ["a", "a"], anchor_pins={"a": 0})
    assert g2.anchors == {"a": g2.pins[0].node}


def test_net_with_copper_but_no_pin_warns_and_has_no_anchor() -> None:
    g = graph("overlapping_nets.routes.toml", ["a", "a"])
    assert "b" not in g.anchors
    assert any("net 'b' has copper (trace[1]) but no pin" in w for w in g.warnings)


def test_arrays_match_segments_and_are_deterministic() -> None:
    a = graph("via_stack.routes.toml", ["a"] * 4)
    b = graph("via_stack.routes.toml", ["a"] * 4)
    arr = a.arrays
    assert len(arr) == len(a.segments) == 7
    for k, s in enumerate(a.segments):
        assert s.index == k
        assert tuple(arr.start[k]) == s.start and tuple(arr.end[k]) == s.end
        assert arr.node_from[k] == s.node_from and arr.node_to[k] == s.node_to
        assert arr.round[k] == (s.kind == "via") and arr.radius[k] == s.radius
    for field in ("start", "end", "width", "thickness", "round", "radius", "inner_radius",
                  "net_index", "node_from", "node_to", "mirror_z"):
        np.testing.assert_array_equal(getattr(a.arrays, field), getattr(b.arrays, field))
    assert arr.start.shape == (7, 3) and arr.net_index.dtype.kind == "i"


def test_every_segment_end_is_its_node() -> None:
    for name, nets in [("t_junction.routes.toml", ["a"] * 3), ("plane_net.routes.toml",
                                                               ["vin", "vin", "0", "0"])]:
        g = graph(name, nets)
        for s in g.segments:
            if s.kind == "trace":
                assert g.nodes[s.node_from].point == s.start
                assert g.nodes[s.node_to].point == s.end
            assert g.nodes[s.node_from].net == g.nodes[s.node_to].net == s.net


def test_pin_nets_length_must_match() -> None:
    with pytest.raises(ValueError, match="pin_nets has 1 entries for 3 pins"):
        graph("t_junction.routes.toml", ["a"])


def test_demo_board() -> None:
    """The demo: every routed net is one piece of copper, with no warning; the
    top layer is imaged at the ground plane's top face (1.2 + 0.035 mm)."""
    from parasite.netlist import read_netlist
    from parasite.pins import resolve_pins

    routes = load_routes(ROOT / "fixtures" / "demo" / "buck.routes.toml")
    res = resolve_pins(routes, read_netlist(ROOT / "fixtures" / "demo" / "buck.cir"))
    g = build_graph(routes, res.nets, anchor_pins=res.anchor_pins)
    assert g.warnings == ()
    circuit_nets = {n for n in g.nets if not n.startswith("probe:")}  # probe leads: own nets
    assert circuit_nets == {"vin", "sw", "0", "g1", "g2", "drv1", "drv2"}
    assert set(g.anchors) == circuit_nets
    assert g.anchors["0"] == g.pins[1].node  # [nets.0] anchor = "VIN:n"
    for comp_net in circuit_nets:
        nodes = {n.id for n in g.nodes if n.net == comp_net}
        assert sum(1 for c in components(g) if c & nodes) == 1, comp_net
    top = np.array([s.layer == "top" for s in g.segments])
    np.testing.assert_allclose(g.arrays.mirror_z[top], 1.235 * MM, rtol=1e-12)
    assert 20 <= len(g.segments) <= 60


STACK = """format = "parasite-routes/1"
units = "mm"
[layers.top]
z = 1.5
thickness = 0.05
[layers.mid]
z = 0.8
thickness = 0.05
[layers.bottom]
z = 0
thickness = 0.05
"""


def _board(extra: str, nets: list[str]) -> CopperGraph:
    return build_graph(parse_routes((STACK + extra).encode(), "s.routes.toml", "toml"), nets)


def test_stacked_vias_and_a_pin_on_a_via_pad() -> None:
    """via[0] top->bottom passes mid, where via[1] (mid->bottom, same place)
    ends: via[0] joins mid there. The pin 0.1 mm from the barrel's axis (radius
    0.2 mm) on bottom, where there is no trace, is on the via's node."""
    g = _board("""[[trace]]
net = "a"
layer = "top"
width = 1
points = [[0, 0], [5, 0]]
[[via]]
net = "a"
at = [5, 0]
from = "top"
to = "bottom"
diameter = 0.4
[[via]]
net = "a"
at = [5, 0]
from = "mid"
to = "bottom"
diameter = 0.4
[[pin]]
terminal = "R1:1"
at = [0, 0]
layer = "top"
[[pin]]
terminal = "R2:1"
at = [5.1, 0]
layer = "bottom"
""", ["a", "a"])
    v0 = [s.layer for s in g.segments if s.source == "via[0]"]
    assert v0 == ["top-mid", "mid-bottom"]
    (v1,) = [s for s in g.segments if s.source == "via[1]"]
    bottom_node = g.pins[1].node
    assert g.nodes[bottom_node].layer == "bottom" and v1.node_to == bottom_node
    assert g.nodes[bottom_node].point[:2] == pytest.approx((5 * MM, 0.0))
    assert g.warnings == ()


def test_barrel_through_another_nets_copper_warns() -> None:
    """A via of net b at (3, 0) passes through net a's 1 mm trace on top."""
    g = _board("""[[trace]]
net = "a"
layer = "top"
width = 1
points = [[0, 0], [5, 0]]
[[trace]]
net = "b"
layer = "bottom"
width = 1
points = [[3, 0], [3, 5]]
[[via]]
net = "b"
at = [3, 0]
from = "bottom"
to = "top"
diameter = 0.3
[[pin]]
terminal = "R1:1"
at = [0, 0]
layer = "top"
[[pin]]
terminal = "R1:2"
at = [3, 5]
layer = "bottom"
""", ["a", "b"])
    # the via meets no copper of its own net on top: that is a warning of its own
    joined = [x for x in g.warnings if "the via joins copper of net 'b' on layer 'bottom' only" in x]
    assert len(joined) == 1 and len(g.warnings) == 2
    (w,) = [x for x in g.warnings if x not in joined]
    assert "via[0]: the barrel of net 'b' overlaps copper of net 'a' (trace[0]) on layer 'top'" in w
    # the via is not joined to net a's trace: that trace stays one 5 mm segment
    assert [round(s.length / MM, 9) for s in g.segments if s.net == "a"] == [5.0]
