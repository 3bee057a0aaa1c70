"""``parasite ring`` end to end, driven through click's CliRunner with the real
ngspice.

The demo check is against the invented "measured" waveform of
fixtures/demo/make_measured.py, which ngspice made from a lumped series RLC
loop of L = 3.2 nH, R = 0.45 ohm, C = 390 pF (a different circuit description
from the demo netlist). The ring capacitance is taken from the demo's low-side
switch model at the 48 V it blocks; the fit must find L within 3 % (the
issue's requirement) and R within 5 % (the waveform is quantised to 0.625 V).
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from parasite.cli import main

pytestmark = pytest.mark.ngspice

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "fixtures" / "demo"
L_TRUE, R_TRUE = 3.2e-9, 0.45  # fixtures/demo/make_measured.py


def run(args: list[str]) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, args, catch_exceptions=False)
    return result.exit_code, result.stdout, result.stderr


def test_help_carries_the_caution() -> None:
    code, out, _ = run(["ring", "--help"])
    assert code == 0
    text = " ".join(out.split())
    assert "probing a live power stage is hazardous" in text
    assert "local codes and licensed practice" in text
    assert "estimates, to be confirmed by measurement" in text


def test_demo_fit_recovers_the_loop_of_the_synthetic_measurement(tmp_path: Path) -> None:
    picture = tmp_path / "ring.png"
    code, out, err = run([
        "ring", str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"), "--node", "sw",
        "--measured", str(DEMO / "buck.measured.csv"), "--plot", str(picture),
        "--format", "json", "--quiet",
    ])
    assert code == 0, err
    report = json.loads(out)
    assert report["format"] == "parasite-ring/1"
    assert [e["direction"] for e in report["measured"]["edges"]] == ["rising", "falling"]
    assert report["simulations"]["ideal"]["edges"] and report["simulations"]["augmented"]["edges"]
    measured_fits = [f for f in report["fit"] if f["source"].startswith("measured")]
    assert len(measured_fits) == 2
    for f in measured_fits:
        assert f["inductance"] == pytest.approx(L_TRUE, rel=0.03)
        assert f["resistance"] == pytest.approx(R_TRUE, rel=0.05)
        (dev,) = f["capacitance_from"]
        assert dev["device"] == ("M2" if f["direction"] == "rising" else "M1")
        assert dev["voltage"] == pytest.approx(48.0, rel=0.03)
        if report["loop"] is not None:
            lref = report["loop"]["inductance"]
            assert f["inductance_difference"] == pytest.approx((f["inductance"] - lref) / lref)
    for comp in report["comparison"]:
        row = comp["metrics"]["frequency"]
        if row["augmented"] is not None:
            assert row["difference"] == pytest.approx(row["augmented"] - row["measured"])
        assert comp["time_offset"] is not None
    assert any("hazardous" in c for c in report["cautions"])
    assert picture.read_bytes().startswith(b"\x89PNG\r\n\x1a\n")


def test_demo_text_table(tmp_path: Path) -> None:
    out_file = tmp_path / "ring.txt"
    code, out, err = run([
        "ring", str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"), "--node", "SW",
        "--measured", str(DEMO / "buck.measured.csv"), "-o", str(out_file), "--quiet",
    ])
    assert code == 0, err
    assert out == ""
    text = out_file.read_text()
    assert text.startswith("Ringing at node sw\n(read at node sw: with the copper, the point "
                           "at pin M1:s;")
    assert "within +-5 % of the step around the final level" in text
    assert re.search(r"^measured\s+1\s+rising\s", text, re.MULTILINE)
    # the demo's augmented waveform starts high: its first rising edge is edge 2
    assert ("Measured edge 1 (rising) against augmented edge 2 and ideal edge 1 "
            "(pairing: order)") in text
    assert "Caution: Probing a live power stage is hazardous" in text


NO_TRAN = b"""no analysis
V1 a 0 1
R1 a 0 1k
.end
"""

BAD_CARD = b"""bad parameter
V1 a 0 PULSE(0 1 0 1n 1n 1u 2u)
R1 a 0 1k foo=3
.tran 1n 4u
.end
"""

NOT_SAVED = b"""node not saved
V1 a 0 PULSE(0 1 0 1n 1n 1u 2u)
R1 a b 1k
R2 b 0 1k
.save v(a)
.tran 1n 4u
.end
"""


@pytest.mark.parametrize(
    ("deck", "message"),
    [
        (NO_TRAN, r"x\.cir: error: the netlist has no \.tran card"),
        (BAD_CARD, r"(?s)x\.cir: error: ngspice failed \(exit code 1\); ngspice says:.*"
                   r"r1 a 0 1k foo=3.*unknown parameter \(foo\)"),
        (NOT_SAVED, r"x\.cir: error: node 'b' is not in the simulation's output \(saved: v\(a\)\)"),
    ],
)
def test_simulation_problems_are_reported(tmp_path: Path, deck: bytes, message: str) -> None:
    net = tmp_path / "x.cir"
    net.write_bytes(deck)
    code, out, err = run(["ring", str(net), str(DEMO / "buck.routes.toml"), "--node", "b",
                          "--quiet"])
    assert code == 1
    assert out == ""
    assert re.search(message, err), err


def test_unreadable_measurement_is_reported(tmp_path: Path) -> None:
    bad = ROOT / "fixtures" / "scope" / "malformed" / "bad_value.csv"
    net = tmp_path / "x.cir"
    net.write_bytes(NOT_SAVED.replace(b".save v(a)\n", b""))
    code, out, err = run(["ring", str(net), str(DEMO / "buck.routes.toml"), "--node", "a",
                          "--measured", str(bad), "--quiet"])
    assert code == 1
    assert re.search(r"bad_value\.csv:152: error: column 2: 'overload' is not a number", err), err


def test_plot_needs_a_picture_extension(tmp_path: Path) -> None:
    code, _, err = run(["ring", str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"),
                        "--node", "sw", "--plot", str(tmp_path / "ring.jpg")])
    assert code == 2
    assert "use .png or .svg" in err
