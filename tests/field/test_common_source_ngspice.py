"""Common-source inductance through ngspice: the gate loop's open-circuit voltage
during a linear current ramp in the power loop equals M di/dt, with M from
parasite.field on the same extraction (Faraday's law for coupled circuits)."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from parasite.cli import main
from parasite.field import loop_coupling, mutual_impedance
from parasite.loops import loop_results
from parasite.pipeline import extract, load_inputs
from parasite.spice import run_ngspice

pytestmark = pytest.mark.ngspice

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "field"
DIDT = 10.0 / 1e-6  # A/s: IP ramps from -5 A to +5 A between 1 us and 2 us


def _nodes(netlist: str, element: str) -> tuple[str, str]:
    m = re.search(rf"^{element}\s+(\S+)\s+(\S+)", netlist, re.MULTILINE | re.IGNORECASE)
    assert m, element
    return m.group(1), m.group(2)


def _gate_emf(tmp_path: Path, extra: list[str]) -> tuple[float, float]:
    """Augment with the command line, simulate in ngspice; fit v(RD) = a + b i(t)
    over the middle of the ramp and return (a, b): a is the induced EMF at i = 0,
    b the common resistance."""
    out = tmp_path / "cs.augmented.cir"
    r = CliRunner().invoke(main, ["augment", str(FIXTURES / "common_source.cir"),
                                  str(FIXTURES / "common_source.routes.toml"), "-o", str(out),
                                  "--quiet", *extra])
    assert r.exit_code == 0, r.output
    text = out.read_text()
    res = run_ngspice(text, base_dir=tmp_path)
    t = np.asarray(res.scale)
    a, b = _nodes(text, "RD")
    v = np.asarray(res.vector(f"v({a})")) - np.asarray(res.vector(f"v({b})"))
    sel = (t > 1.2e-6) & (t < 1.8e-6)
    i = -5.0 + DIDT * (t[sel] - 1e-6)
    slope, intercept = np.polyfit(i, v[sel], 1)
    return float(intercept), float(slope)


@pytest.mark.parametrize("extra", [["--min-coupling", "0"], []], ids=["all couplings", "default"])
def test_gate_loop_voltage_is_m_didt(tmp_path: Path, extra: list[str]) -> None:
    """Invented board (fixtures/field/common_source.*): the power loop's current ramps
    at 10 A/us; the gate loop (open: 1 Gohm in place of the driver) shares 19 mm of
    source copper with it. ngspice's transient of the augmented netlist gives the
    gate loop's voltage; at the ramp's zero crossing (no resistive drop) it equals
    M di/dt within 1%, M = Re(i_gate^H L i_power) from parasite.field.loop_coupling on
    the same extraction (Faraday's law, v = M di/dt, Griffiths, *Introduction to
    Electrodynamics*, 4th ed., 2013, sec. 7.2.3; ngspice is the outside reference
    that integrates the coupled inductors). 1%: the written couplings are rounded
    and, by default, pruned to the board's threshold. The shared copper dominates
    (common-source inductance); the gate loop lies outside the power loop, where
    the power loop's field is reversed, so the flux coupling subtracts from it; the
    loops' own inductances agree with parasite.loops to 1e-9. The voltage's part that
    grows with the current is the common resistance: the 19 mm x 1 mm x 35 um shared
    copper, R = rho l / (w t) with annealed copper's rho = 1.7241e-8 ohm m (IEC 60028,
    1925), within 1%, and the real part of parasite.field.mutual_impedance at DC."""
    inputs = load_inputs(str(FIXTURES / "common_source.cir"), str(FIXTURES / "common_source.routes.toml"))
    ex = extract(inputs)
    results = {r.name: r for r in loop_results(inputs.graph, inputs.netlist, ex.L, ex.R)}
    n = len(inputs.graph.segments)
    ip = results["power"].segment_currents(n).real
    ig = results["gate"].segment_currents(n).real
    c = loop_coupling(ex.L, ip, ig)
    own = {name: r.inductance for name, r in results.items()}
    assert c.self_a == pytest.approx(own["power"], rel=1e-9)
    assert c.self_b == pytest.approx(own["gate"], rel=1e-9)
    assert c.shared > 0 and c.flux < 0 and c.mutual > 0
    emf, r_common = _gate_emf(tmp_path, extra)
    assert emf == pytest.approx(c.mutual * DIDT, rel=0.01)
    assert r_common == pytest.approx(1.7241e-8 * 19e-3 / (1e-3 * 35e-6), rel=0.01)
    assert r_common == pytest.approx(mutual_impedance(ex.L, ex.R, ig, ip, 0.0).real, rel=0.01)
