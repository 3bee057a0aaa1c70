"""The instrument's optional series ``damping`` resistance: loading, netlist
cards, report, and the leads' resonance in ngspice.

References: the reading is the voltage across the instrument's R || C behind
the damping resistance, so with the leads closing a loop through an ideal
source ``V`` between the contacts it is the voltage divider

    H(j w) = Z / (Z + R_s + j w L),  Z = R_p || 1 / (j w C),

``L`` the leads' loop inductance and ``R_s`` the leads' resistance plus the
damping resistance (Kirchhoff's laws); its peak magnitude is, for a
second-order low-pass with damping ratio ``zeta < 1/sqrt(2)``,
``1 / (2 zeta sqrt(1 - zeta^2))`` (e.g. Ogata, *Modern Control Engineering*,
5th ed., 2010, section 7-2, resonant peak). ngspice 39's AC analysis of the
augmented netlist is the independent computation checked against both.
"""

from __future__ import annotations

import math
import re
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from geometry.errors import RoutesError
from geometry.routes import parse_routes
from tests.boards import ONE_LAYER as HEAD
from tests.boards import ROOT
from tests.boards import pin as _pin
from tests.boards import trace as _trace

ROOT = ROOT
FIXTURE = ROOT / "fixtures" / "routes" / "probe_resistor.routes.toml"

NETLIST = """lead resonance of a probe across a source (test scenario)
V1 a b AC 1
RLEAK b 0 1meg
{extra}
.ac lin 1 1meg 1meg
.end
"""


def routes(instrument: str) -> str:
    """Two 1 mm pads 3 mm apart with V1 pinned at their ends; the probe touches
    the same two points, so the only loop is leads + V1 (the pads carry no
    current). Tip lead 28.4 mm straight up; ground lead up and back over to
    0.5 mm beside the tip lead's end."""
    text = HEAD + _trace("a", [(0, 0), (1, 0)], 1.0) + _trace("b", [(0, 3), (1, 3)], 1.0)
    text += _pin("V1:p", (0, 0)) + _pin("V1:n", (0, 3))
    text += ('[[probe]]\nname = "p"\ntip = { layer = "top", at = [0, 0] }\n'
             'ground = { layer = "top", at = [0, 3] }\n'
             "tip_lead = { points = [[0, 0, 1.6], [0, 0, 30]], radius = 0.2 }\n"
             "ground_lead = { points = [[0, 3, 1.6], [0, 3, 30], [0, 0.5, 30]], radius = 0.2 }\n"
             f"instrument = {instrument}\n")
    return text


def test_damping_key_is_loaded() -> None:
    text = FIXTURE.read_text().replace(
        'instrument = "10x"', 'instrument = { resistance = "10meg", capacitance = "12p", damping = "47" }')
    ins = parse_routes(text.encode(), "p.routes.toml", "toml").probes[0].instrument
    assert (ins.resistance, ins.capacitance, ins.damping, ins.preset) == (1e7, 12e-12, 47.0, None)
    plain = parse_routes(FIXTURE.read_bytes(), "p.routes.toml", "toml").probes[0].instrument
    assert plain.damping == 0.0  # presets have none


@pytest.mark.parametrize(("value", "key", "message"), [
    ("-5", "probe[0].instrument.damping", r"must be a positive number in ohm .*got -5"),
    ('"fifty"', "probe[0].instrument.damping", r"must be a positive number in ohm .*got 'fifty'"),
])
def test_bad_damping(value: str, key: str, message: str) -> None:
    text = FIXTURE.read_text().replace(
        'instrument = "10x"', f"instrument = {{ resistance = 1e7, capacitance = 12e-12, damping = {value} }}")
    with pytest.raises(RoutesError, match=message) as info:
        parse_routes(text.encode(), "p.routes.toml", "toml")
    assert info.value.key == key and info.value.line is not None


def test_unknown_instrument_key_names_damping() -> None:
    text = FIXTURE.read_text().replace(
        'instrument = "10x"', "instrument = { resistance = 1e7, capacitance = 12e-12, dampign = 50 }")
    with pytest.raises(RoutesError, match=r"unknown key 'dampign'; accepted keys here: "
                                          r"resistance, capacitance, damping"):
        parse_routes(text.encode(), "p.routes.toml", "toml")


def _augment(tmp_path: Path, instrument: str, extra: str = "") -> Any:
    from parasite.augment import augment_files

    net, rts = tmp_path / "p.cir", tmp_path / "p.routes.toml"
    net.write_text(NETLIST.format(extra=extra))
    rts.write_text(routes(instrument))
    return augment_files(str(net), str(rts))


def test_cards_and_reading_nodes(tmp_path: Path) -> None:
    """Rdamp runs from the tip lead's end to the node behind it; R and C sit
    between that node and the ground lead's end, which is the reading."""
    aug = _augment(tmp_path, "{ resistance = 1e7, capacitance = 12e-12, damping = 20 }")
    text = aug.netlist_bytes.decode()
    (p,) = aug.report["probes"]
    assert (p["plus"], p["tip_end"], p["minus"]) == ("probe_p_tip_in", "probe_p_tip", "probe_p_gnd")
    assert p["instrument"]["damping"] == 20.0
    assert re.search(r"^Rdamp_p probe_p_tip probe_p_tip_in 2\.0+e\+01$", text, re.M)
    assert re.search(r"^Rprobe_p probe_p_tip_in probe_p_gnd 1\.0+e\+07$", text, re.M)
    assert re.search(r"^Cprobe_p probe_p_tip_in probe_p_gnd 1\.20+e-11$", text, re.M)
    assert ".save" not in text  # no .save of its own: ngspice writes every node anyway
    # a netlist node already named like the inner node moves the probe's names aside
    taken = _augment(tmp_path, "{ resistance = 1e7, capacitance = 12e-12, damping = 20 }",
                     extra="RX probe_p_tip_in 0 1k")
    (p,) = taken.report["probes"]
    assert p["plus"] != "probe_p_tip_in" and p["plus"] == p["tip_end"] + "_in"
    assert re.search(rf"^Rdamp_p {p['tip_end']} {p['plus']} ", taken.netlist_bytes.decode(), re.M)


@pytest.mark.ngspice
def test_lead_resonance_in_ngspice(tmp_path: Path) -> None:
    """AC sweep of the reading per volt of V1 across the leads' resonance: within
    1e-6 of the divider H(j w) built from the report's lead inductance and
    resistance (the cards carry 11 significant digits), and its peak within 1e-4
    of 1/(2 zeta sqrt(1 - zeta^2)) with the report's damping ratio (sweep step
    0.05% of f0, where the peak's flatness leaves an error below 1e-6)."""
    from parasite.spice import run_ngspice

    R_P, C, R_D = 1e7, 12e-12, 20.0
    aug = _augment(tmp_path, f"{{ resistance = {R_P:g}, capacitance = {C:g}, damping = {R_D:g} }}")
    (p,) = aug.report["probes"]
    L, r_leads, f0, zeta = (p["lead_inductance"], p["lead_resistance"], p["lead_resonance"],
                            p["lead_damping_ratio"])
    assert 10e-9 < L < 100e-9 and 0.05 < zeta < 0.5  # the scenario's ranges: a clear, damped peak
    deck = aug.netlist_bytes.decode().replace(
        ".ac lin 1 1meg 1meg", f".ac lin 2001 {0.5 * f0:.9e} {1.5 * f0:.9e}")
    res = run_ngspice(deck, base_dir=tmp_path)
    f = np.real(np.asarray(res.vector("frequency")))
    h = np.asarray(res.vector(f"v({p['plus']})")) - np.asarray(res.vector(f"v({p['minus']})"))
    w = 2 * math.pi * f
    z = 1.0 / (1.0 / R_P + 1j * w * C)
    expected = z / (z + r_leads + R_D + 1j * w * L)
    assert np.max(np.abs(h - expected) / np.abs(expected)) < 1e-6
    peak = 1.0 / (2 * zeta * math.sqrt(1 - zeta**2))
    assert np.max(np.abs(h)) == pytest.approx(peak, rel=1e-4)
