"""``plot --loop`` on a board with a meshed pour: the heat map of the loop's
current density (fixture ``fixtures/routes/pour_plane``, invented)."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import numpy as np
import pytest
from click.testing import CliRunner

from parasite.loops import loop_results
from parasite.pipeline import extract, load_inputs
from parasite.plot import plot_bytes, pour_current_density
from tests.boards import ROUTES

pytest.importorskip("matplotlib")
CIR = str(ROUTES / "pour_plane.cir")
TOML = str(ROUTES / "pour_plane.routes.toml")


@pytest.fixture(scope="module")
def solved():  # type: ignore[no-untyped-def]
    inputs = load_inputs(CIR, TOML)
    ex = extract(inputs)
    (loop,) = loop_results(inputs.graph, inputs.netlist, ex.L, ex.R)
    return inputs.graph, ex.L, loop


def test_return_current_crosses_the_pour_whole_and_crowds_under_the_trace(solved) -> None:  # type: ignore[no-untyped-def]
    """Across the pour at mid-length the x-cells carry the whole loop current
    back (Kirchhoff's current law: all of it returns through the pour; to
    rounding), and the picture's sheet current integrates to it within 8%
    (the linear interpolation between cell centres 0.5 mm apart rounds off a
    peak only h = 0.235 mm wide, and over-fills its flanks). At 100 MHz it peaks under the
    trace (y = 5 mm, within one edge cell of 0.5 mm) and falls with the
    distance from it, as the line-current density I h / (pi (h^2 + x^2)) over
    a perfect plane does (Johnson & Graham, *High-Speed Digital Design*, 1993,
    ground-plane current; the values themselves are checked in
    tests/extract/test_pour_physics.py)."""
    graph, _, loop = solved
    a = graph.arrays
    cut = np.array([s.kind == "cell" for s in graph.segments]) & (
        np.minimum(a.start[:, 0], a.end[:, 0]) < 12e-3) & (np.maximum(a.start[:, 0], a.end[:, 0]) > 12e-3)
    sign = np.sign(a.end[cut, 0] - a.start[cut, 0])
    assert float(np.sum(sign * loop.currents[cut].real)) == pytest.approx(-1.0, abs=1e-9)
    (d,) = pour_current_density(graph, loop.currents)
    col = int(np.argmin(np.abs(d.x - 12e-3)))
    jx = d.jx[:, col]
    ok = np.isfinite(jx)
    dy = d.y[1] - d.y[0]
    assert float(np.sum(jx[ok].real) * dy) == pytest.approx(-1.0, abs=0.08)
    mag = np.abs(jx)
    peak = d.y[int(np.nanargmax(mag))]
    assert abs(peak - 5e-3) <= 0.5e-3
    far = mag[np.abs(d.y - 5e-3) > 3e-3]
    near = mag[np.abs(d.y - 5e-3) < 0.5e-3]
    assert np.nanmax(far) < 0.1 * np.nanmax(near)


def test_plot_draws_the_pour_heat_map(solved, tmp_path) -> None:  # type: ignore[no-untyped-def]
    """The SVG holds the heat map and the arrows of the pour (artist ids
    ``pour:pour[0]``, ``pour-arrows:pour[0]``; parsed as XML)."""
    graph, L, loop = solved
    svg = plot_bytes(graph, L, "svg", loop=loop)
    ids = {el.get("id") for el in ET.fromstring(svg).iter()}
    assert "pour:pour[0]" in ids and "pour-arrows:pour[0]" in ids
    plain = plot_bytes(graph, L, "svg")  # without a loop: no current to draw
    assert "pour:pour[0]" not in {el.get("id") for el in ET.fromstring(plain).iter()}


def test_plot_command_with_loop_on_a_pour(tmp_path) -> None:  # type: ignore[no-untyped-def]
    """``parasite plot --loop`` writes the picture (a PNG: its signature bytes)."""
    from parasite.cli import main

    out = tmp_path / "loop.png"
    res = CliRunner().invoke(main, ["plot", CIR, TOML, "-o", str(out), "--loop", "load loop", "-q"])
    assert res.exit_code == 0, res.output
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
