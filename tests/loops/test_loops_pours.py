"""Loops whose current returns through a meshed pour: the report names the pour,
and a wide pour agrees with the ideal infinite plane (method of images).
Board: ``fixtures/routes/pour_plane.routes.toml`` (invented)."""

from __future__ import annotations

import re

import pytest

from parasite.augment import augment_text, report_of
from tests.boards import ROUTES

NETLIST = (ROUTES / "pour_plane.cir").read_text()
POUR_ROUTES = (ROUTES / "pour_plane.routes.toml").read_text()


def _loop(routes: str, **kw: object) -> dict:
    res = augment_text(NETLIST, routes, routes_format="toml", netlist_name="pour_plane.cir",
                       routes_name="pour_plane.routes.toml", **kw)  # type: ignore[arg-type]
    (loop,) = res.report["loops"]
    return loop


def test_wide_meshed_pour_matches_the_image_method() -> None:
    """A 20 mm trace 0.235 mm above a 24 x 10 mm meshed pour (42 heights wide) at
    100 MHz against the same trace over the ideal infinite plane (method of
    images: a perfect conductor's return current is the image current;
    C. R. Paul, *Inductance: Loop and Partial*, Wiley-IEEE 2010; cited from memory). The mesh
    carries its current at the copper's mid-plane, so the ideal plane's face is
    put there (a 17.5 um plane under the same trace). Bound 3% (the issue's,
    for a plane at least 20 heights wide: the finite width and the mesh's
    point contacts at the two ends add a little); measured about 0.2%."""
    meshed = _loop(POUR_ROUTES, min_coupling=0.0)["inductance"]
    ideal_routes = re.sub(r"\[\[pour\]\].*?\n\n", "", POUR_ROUTES, flags=re.S)
    ideal_routes = ideal_routes.replace("z = 0.0\nthickness = 0.035", "z = 0.0\nthickness = 0.0175")
    assert "[[pour]]" not in ideal_routes
    ideal = _loop(ideal_routes)["inductance"]
    assert meshed == pytest.approx(ideal, rel=0.03)


def test_loop_report_names_the_pour_it_uses() -> None:
    """The JSON report lists the pour under the loop (entry, name, layer, its
    cells' terms, which add up with the trace's to the loop inductance), and
    the text report names it. The split of terms (self plus half of each
    mutual) adds up to the loop value by construction (Tellegen's theorem, as
    for every loop; common practice)."""
    loop = _loop(POUR_ROUTES)
    (use,) = loop["pours"]
    assert (use["pour"], use["name"], use["layer"], use["net"]) == ("pour[0]", "ground pour", "gnd", "0")
    assert use["cells"] > 10 and 0 < use["peak_current"] <= 1.0 + 1e-9
    trace_term = next(c["inductance"] for c in loop["contributors"] if c["segment"] == "vin.1")
    assert trace_term + use["inductance"] == pytest.approx(loop["inductance"], rel=1e-9)
    text = report_of(NETLIST, POUR_ROUTES, fmt="text", routes_format="toml")
    assert re.search(r"pour ground pour \(pour\[0\]\) on layer gnd", text)


def test_loop_without_pour_lists_none() -> None:
    """A loop over the ideal plane (no ``[[pour]]``) has no ``pours`` key (the
    report of a board without pours is unchanged)."""
    ideal_routes = re.sub(r"\[\[pour\]\].*?\n\n", "", POUR_ROUTES, flags=re.S)
    assert "pours" not in _loop(ideal_routes)


def _loop_l(routes: str) -> float:
    from parasite.loops import loop_results
    from parasite.pipeline import extract, inputs_from_text

    inputs = inputs_from_text(NETLIST, routes)
    ex = extract(inputs)
    (r,) = loop_results(inputs.graph, inputs.netlist, ex.L, ex.R)
    return r.inductance


def _with_hole(x0: float, y0: float, x1: float, y1: float) -> str:
    hole = f"holes = [[[{x0}, {y0}], [{x1}, {y0}], [{x1}, {y1}], [{x0}, {y1}]]]\n"
    return POUR_ROUTES.replace('name = "ground pour"\n', 'name = "ground pour"\n' + hole)


def test_slot_across_the_return_raises_the_loop_and_a_parallel_one_does_not() -> None:
    """Slots given as ``holes`` of the routes file's pour, 0.4 mm wide, at 100
    MHz: a slot across the return path under the trace (at x = 12 mm) forces
    the current around it and raises the loop inductance, more for the longer
    slot (3 mm, then 6 mm across the trace); a slot of 6 mm parallel to the
    trace, 2 mm beside it, changes it by under 1%, since the return current
    crowds under the trace (falling as h / (h^2 + x^2): Johnson & Graham 1993,
    ground-plane current). Common practice of layout: never cut the return
    under a fast trace. The rise bounds (1% and 5%) are floors; measured +6%
    and +13%, and -0.01% for the parallel slot."""
    base = _loop_l(POUR_ROUTES)
    short = _loop_l(_with_hole(11.8, 3.5, 12.2, 6.5))
    long = _loop_l(_with_hole(11.8, 2.0, 12.2, 8.0))
    parallel = _loop_l(_with_hole(9.0, 6.8, 15.0, 7.2))
    assert base * 1.01 < short < long
    assert long > 1.05 * base
    assert abs(parallel / base - 1) < 0.01
