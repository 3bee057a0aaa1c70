"""Loops whose element hops cancel in the injection vector: two elements between
the same two nets.

Where those nets have no copper, the loop passes through elements but no copper
carries its current: its copper inductance and resistance are 0 (nothing to
count; the elements' own inductance is never counted). Where one of the nets has
a trace from one element's pin to the other's, the loop inductance is that
trace's partial self inductance (a tree: the signed sum along the path), checked
against Grover's GMD method (Grover, *Inductance Calculations*, 1946, ch. 5,
eq. (1) with the rectangle's GMD 0.2235 (w + t), ch. 3 Table 1; Rosa 1908).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.boards import ROOT
from tests.reference import gmd_rectangle, self_straight_gmd

ROOT = ROOT
ROUTES = ROOT / "fixtures" / "routes"


def run_loops(netlist: str | Path, routes: str | Path):
    from parasite.loops import loop_results
    from parasite.pipeline import extract, load_inputs

    inputs = load_inputs(str(netlist), str(routes))
    ex = extract(inputs)
    return {r.name: r for r in loop_results(inputs.graph, inputs.netlist, ex.L, ex.R)}


def test_copperless_fixture_loops_have_no_copper_inductance() -> None:
    """fixtures/routes/loops: C1 and M1 (and V1 and M1's gate) sit between the
    same two nets and no net has copper: every loop is solved, to exactly 0."""
    loops = run_loops(ROUTES / "loops.cir", ROUTES / "loops.routes.toml")
    assert list(loops) == ["power loop", "gate", "no budget"]
    for r in loops.values():
        assert r.inductance == 0.0 and r.resistance == 0.0
        assert r.contributors == () and r.pair_contributors == ()
        assert r.within_limit is True
    assert loops["power loop"].frequency == 100e6  # the loop's own frequency is kept


HV_TRACE = """format = "parasite-routes/1"
units = "mm"

[layers.top]
z = 1.565
thickness = 0.035

[[trace]]
net = "hv"
layer = "top"
width = 1.0
points = [[0, 0], [20, 0]]
{pins}
[[loop]]
name = "power loop"
path = ["C1:1", "M1:d", "M1:s", "C1:2"]

[[loop]]
name = "copper only"
path = ["C1:1", "M1:d"]
"""

PINS = """
[[pin]]
terminal = "C1:1"
at = [0, 0]
layer = "top"

[[pin]]
terminal = "M1:d"
at = [20, 0]
layer = "top"
"""


def test_one_routed_net_between_the_two_elements(tmp_path: Path) -> None:
    """With the elements pinned at the two ends of a 20 mm x 1 mm x 35 um trace the
    loop sees the trace's partial self inductance (the other net has no copper).
    Grover's GMD method is accurate well below 1% for l/GMD ~ 87; tolerance 0.5%."""
    routes = tmp_path / "hv.routes.toml"
    routes.write_text(HV_TRACE.format(pins=PINS).replace(
        '\n[[loop]]\nname = "copper only"\npath = ["C1:1", "M1:d"]\n', ""))
    loop = run_loops(ROUTES / "loops.cir", routes)["power loop"]
    expected = self_straight_gmd(20e-3, gmd_rectangle(1e-3, 35e-6))
    assert loop.inductance == pytest.approx(expected, rel=5e-3)
    assert loop.resistance > 0
    assert [sid for sid, _ in loop.contributors] == ["hv.1"]

    # Both terminals left on the net's anchor: they are one node, no copper between them.
    routes.write_text(HV_TRACE.format(pins="").replace(
        '\n[[loop]]\nname = "copper only"\npath = ["C1:1", "M1:d"]\n', ""))
    loop = run_loops(ROUTES / "loops.cir", routes)["power loop"]
    assert loop.inductance == 0.0 and loop.resistance == 0.0


def test_a_path_through_no_element_is_still_an_error(tmp_path: Path) -> None:
    from geometry.errors import RoutesError

    routes = tmp_path / "hv.routes.toml"
    routes.write_text(HV_TRACE.format(pins=PINS))
    with pytest.raises(RoutesError, match=r"hv\.routes\.toml:\d+: error: loop\[1\]\.path: "
                       r"loop 'copper only' never passes through an element"):
        run_loops(ROUTES / "loops.cir", routes)
