"""A loop's near-field map (``plot --field``) and its dipole moment and radiated
estimate in the report, on the invented board fixtures/field/common_source.*,
against textbook formulas written here from their sources."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from parasite.cli import main
from parasite.loops import loop_results
from parasite.pipeline import extract, load_inputs
from parasite.plot_field import loop_field_map

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "field"
NETLIST = FIXTURES / "common_source.cir"
ROUTES = FIXTURES / "common_source.routes.toml"
MU0 = 4e-7 * math.pi
Z_MID = 1.565e-3 + 0.0175e-3  # m, the traces' centre plane
# Centre lines of the power loop's copper (m), current in the order of the points:
# net hv (0,11)->(0,20)->(30,20)->(30,11), net s (30,9)->(30,0)->(0,0)->(0,9), in mm.
POWER_POLYLINES = [[(0, 11), (0, 20), (30, 20), (30, 11)], [(30, 9), (30, 0), (0, 0), (0, 9)]]


def _finite_wire(points: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """B (T per 1 A) of a straight filament a -> b at ``points`` (P, 3): magnitude
    mu0 I (sin t2 - sin t1) / (4 pi d) along dl x d (D. J. Griffiths, *Introduction to
    Electrodynamics*, 4th ed., 2013, example 5.5)."""
    u = (b - a) / np.linalg.norm(b - a)
    s_a = (points - a) @ u
    s_b = (points - b) @ u
    foot = a + np.outer(s_a, u)
    d_vec = points - foot
    d = np.linalg.norm(d_vec, axis=1)
    sin2 = -s_b / np.hypot(s_b, d)
    sin1 = -s_a / np.hypot(s_a, d)
    mag = MU0 * (sin2 - sin1) / (4 * math.pi * d)
    return mag[:, None] * np.cross(u, d_vec / d[:, None])


def _power_loop():
    inputs = load_inputs(str(NETLIST), str(ROUTES))
    ex = extract(inputs)
    res = {r.name: r for r in loop_results(inputs.graph, inputs.netlist, ex.L, ex.R)}
    return inputs.graph, res["power"]


def test_field_map_of_a_loop_is_the_finite_wire_sum() -> None:
    """|B| of the power loop at 5 mm above its copper, over the whole 100 x 100
    map: the sum of the finite straight wire formula (Griffiths ex. 5.5) over the
    centre lines of the loop's six pieces, within 1% wherever |B| is above a
    tenth of the map's peak (1%: the 1 mm x 35 um bars are filaments in the
    reference; at 5 mm the section's correction is of order (w / d)^2 / 24 < 0.2%,
    common practice). The loop's copper is a series path, so 1 A flows in every
    piece (its segment currents come from the loop solver)."""
    graph, power = _power_loop()
    fmap = loop_field_map(graph, power, 5e-3)
    assert fmap.z == pytest.approx(1.565e-3 + 0.035e-3 + 5e-3, rel=1e-12)
    X, Y = np.meshgrid(fmap.x, fmap.y)
    pts = np.column_stack([X.ravel(), Y.ravel(), np.full(X.size, fmap.z)])
    B = np.zeros_like(pts)
    for line in POWER_POLYLINES:
        for p, q in zip(line[:-1], line[1:], strict=True):
            B += _finite_wire(pts, np.array([*p, 0.0]) * 1e-3 + [0, 0, Z_MID],
                              np.array([*q, 0.0]) * 1e-3 + [0, 0, Z_MID])
    ref = np.linalg.norm(B, axis=1).reshape(fmap.magnitude.shape)
    sel = ref > 0.1 * ref.max()
    assert sel.sum() > 1000
    np.testing.assert_allclose(fmap.magnitude[sel], ref[sel], rtol=0.01)


def test_report_dipole_moment_and_radiated_estimate() -> None:
    """The power loop with its two parts (0 V source VB, current source IP) as
    straight hops is the 30 mm x 20 mm rectangle of the centre lines: |m| = I A
    = 600 mm^2 per 1 A (J. D. Jackson, *Classical Electrodynamics*, 3rd ed., 1999,
    eq. 5.57, m = I a for a plane loop), to 1e-9. The gate loop closes through
    VGS and RD to an L-shaped area of 10 x 5 + 2 x 14 = 78 mm^2. The radiated
    estimate at 3 m and 100 MHz is Ott's small-loop formula E = 131.6e-16 f^2 A I
    / r (H. W. Ott, *Electromagnetic Compatibility Engineering*, 2009, sec. 12.1),
    within 0.1% (Ott rounds pi mu0 / c to 131.6e-16, 0.07% from 131.69e-16). No
    return plane: the moment with images is the same."""
    r = CliRunner().invoke(main, ["report", str(NETLIST), str(ROUTES), "--format", "json", "-q"])
    assert r.exit_code == 0, r.output
    dip = {d["loop"]: d for d in json.loads(r.output)["dipoles"]}
    assert dip["power"]["magnitude"] == pytest.approx(600e-6, rel=1e-9)
    assert abs(dip["power"]["moment"][2]) == pytest.approx(600e-6, rel=1e-9)
    assert dip["gate"]["magnitude"] == pytest.approx(78e-6, rel=1e-9)
    assert dip["power"]["closed"] and dip["power"]["moment_with_images"] == pytest.approx(
        600e-6, rel=1e-9)
    assert dip["power"]["frequency"] == 100e6 and dip["power"]["distance"] == 3.0
    ott = 131.6e-16 * (100e6) ** 2 * 600e-6 * 1.0 / 3.0
    assert dip["power"]["e_field"] == pytest.approx(ott, rel=1e-3)
    assert dip["power"]["far_field"] is True  # 3 m > lambda / (2 pi) = 0.48 m
    assert "not a compliance result" in dip["power"]["note"]


def test_plot_field_writes_a_picture_and_rejects_bad_options(tmp_path: Path) -> None:
    """``plot --field power --height 5m`` writes an SVG with the heat map (id
    ``fieldmap``); an unknown loop, or --field without --height, is a usage error
    (exit 2) that writes nothing."""
    pytest.importorskip("matplotlib")
    out = tmp_path / "field.svg"
    r = CliRunner().invoke(main, ["plot", str(NETLIST), str(ROUTES), "--field", "power",
                                  "--height", "5m", "-o", str(out), "-q"])
    assert r.exit_code == 0, r.output
    assert 'id="fieldmap"' in out.read_text()
    bad = tmp_path / "bad.png"
    for extra in (["--field", "nosuch", "--height", "5m"], ["--field", "power"]):
        r = CliRunner().invoke(main, ["plot", str(NETLIST), str(ROUTES), *extra, "-o", str(bad), "-q"])
        assert r.exit_code == 2, r.output
        assert not bad.exists()
