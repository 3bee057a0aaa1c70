"""Pours in the routes loader and the copper graph (``[[pour]]`` meshed into
cells joined to the copper that touches them; fixture
``fixtures/routes/pour_plane.routes.toml``, invented)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from shapely.geometry import Polygon

from geometry.errors import RoutesError
from geometry.graph import build_graph
from geometry.routes import load_routes, parse_routes
from tests.boards import ROUTES

FIXTURE = ROUTES / "pour_plane.routes.toml"
PIN_NETS = ["vin", "vin", "0", "0"]  # V1:p, R1:1, R1:2, V1:n (the fixture's netlist)


def test_pour_entry_is_loaded_in_si() -> None:
    """The ``[[pour]]`` entry comes back in metres (units = "mm": times 1e-3, the
    file's own scale) with its net stored as SPICE compares it (gnd -> 0)."""
    r = load_routes(FIXTURE)
    (p,) = r.pours
    assert (p.net, p.layer, p.name) == ("0", "gnd", "ground pour")
    assert p.outline[2] == pytest.approx((24e-3, 10e-3))
    assert p.cell == pytest.approx(3e-3)


def test_graph_meshes_the_pour_and_drops_the_ideal_plane() -> None:
    """The pour layer is no longer an ideal plane (no image face anywhere: the
    only plane was the pour's); the cells are bars of the layer's thickness at
    its mid-plane, and the x-cells alone tile the pour (sum of width x length =
    the polygon's area from shapely/GEOS, to rounding), likewise the y-cells."""
    r = load_routes(FIXTURE)
    g = build_graph(r, PIN_NETS)
    assert g.planes == ()
    assert np.all(np.isnan(g.arrays.mirror_z))
    cells = [s for s in g.segments if s.kind == "cell"]
    assert len(cells) > 100 and all(not s.round for s in cells)
    la = r.layers["gnd"]
    assert all(s.start[2] == pytest.approx(la.mid) and s.thickness == la.thickness for s in cells)
    area = Polygon(r.pours[0].outline).area
    for axis in (0, 1):
        tiles = sum(s.width * s.length for s in cells
                    if abs(s.end[axis] - s.start[axis]) > 0)
        assert tiles == pytest.approx(area, rel=1e-9)
    assert {s.source for s in cells} == {"pour[0]"}
    assert len({s.id for s in g.segments}) == len(g.segments)
    assert [s.index for s in g.segments] == list(range(len(g.segments)))


def test_pins_on_the_pour_join_a_mesh_node_at_their_point() -> None:
    """A pin on the pour layer joins the mesh node at its own point (a grid line
    runs through every attachment point), and that node has cells."""
    r = load_routes(FIXTURE)
    g = build_graph(r, PIN_NETS)
    ends = {s.node_from for s in g.segments if s.kind == "cell"} | {
        s.node_to for s in g.segments if s.kind == "cell"}
    for pn in g.pins:
        if pn.pin.layer == "gnd":
            x, y, z = g.nodes[pn.node].point
            assert math.hypot(x - pn.pin.at[0], y - pn.pin.at[1]) < 1e-12
            assert pn.node in ends
            assert not g.nodes[pn.node].plane


def _with_pours(extra: str) -> bytes:
    return (FIXTURE.read_text() + extra).encode()


def test_overlapping_pours_of_two_nets_are_an_error() -> None:
    """Two nets' pours sharing area on one layer: the later entry is named
    (``pour[1].outline``) with the file's line."""
    text = FIXTURE.read_text().replace('plane = "GND"\n', "")
    text += ('\n[[pour]]\nnet = "vin"\nlayer = "gnd"\n'
             'outline = [[20, 5], [30, 5], [30, 8], [20, 8]]\n')
    with pytest.raises(RoutesError, match=r"pour\[1\]\.outline.*overlaps pour\[0\]"):
        parse_routes(text.encode(), "b.routes.toml", "toml")


def test_pours_of_two_nets_on_one_layer_are_refused_for_now() -> None:
    """Disjoint pours of two nets on one layer are valid in the file but not
    meshed yet: a clear error naming the entry, not a wrong answer."""
    text = FIXTURE.read_text().replace('plane = "GND"\n', "")
    text += ('\n[[pour]]\nnet = "vin"\nlayer = "gnd"\n'
             'outline = [[30, 5], [40, 5], [40, 8], [30, 8]]\n')
    r = parse_routes(text.encode(), "b.routes.toml", "toml")
    with pytest.raises(RoutesError, match=r"pour\[1\]\.net.*not supported yet"):
        build_graph(r, PIN_NETS)


def test_pour_on_a_signal_layer_joins_the_trace_ends_on_it() -> None:
    """A pour on a layer without ``plane`` (here: the load's end of the trace
    lands on a vin pour on "top"): the trace node on the pour is a mesh node,
    so the trace and the pour are one piece of copper."""
    text = FIXTURE.read_text().replace(
        "[[pin]]", '[[pour]]\nnet = "vin"\nlayer = "top"\n'
                   'outline = [[21, 3], [24, 3], [24, 7], [21, 7]]\n\n[[pin]]', 1)
    r = parse_routes(text.encode(), "b.routes.toml", "toml")
    g = build_graph(r, PIN_NETS)
    trace = next(s for s in g.segments if s.kind == "trace")
    top_cells = [s for s in g.segments if s.kind == "cell" and s.layer == "top"]
    assert top_cells
    assert trace.node_to in {s.node_from for s in top_cells} | {s.node_to for s in top_cells}
    assert "top" not in {p.layer for p in g.planes}
    v1p = next(pn for pn in g.pins if pn.pin.terminal == "V1:p")  # off the pour: on the trace
    assert v1p.node == trace.node_from


def test_overlapping_pours_of_one_net_are_refused() -> None:
    """Two pours of one net sharing area on one layer would be two separate
    sheets in the mesh: an error asks to merge them, naming the later entry."""
    text = FIXTURE.read_text() + ('\n[[pour]]\nnet = "gnd"\nlayer = "gnd"\n'
                                  'outline = [[20, 5], [30, 5], [30, 8], [20, 8]]\n')
    r = parse_routes(text.encode(), "b.routes.toml", "toml")
    with pytest.raises(RoutesError, match=r"pour\[1\]\.outline.*overlaps pour\[0\].*merge"):
        build_graph(r, PIN_NETS)
