"""Loop inductances of imported boards against the same copper written by hand.

* ``rc_loop.kicad_pcb`` and ``rc_loop.routes.toml``: one small board, its
  copper written by hand (fixtures/kicad/rc_loop.routes.toml) and imported.
  The only difference is the arc: six 15-degree chords by hand, chords within
  5 um of the arc (about 7 degrees) by the importer; the loop inductances must
  agree within 0.5% (the issue's figure; a chord 70 um inside a 2 mm arc
  moves a 40 mm loop by far less).
* The demo board: ``buck.kicad_pcb`` draws the copper of
  fixtures/demo/buck.routes.toml (tracks, vias, pins where the pads are) plus
  what a real board has and the hand-written file leaves out: pads, stitching
  vias, a micro via, a bottom pour (left out with --no-pours). Loops within 5%.
  Why they agree more closely than that: the pads' bars are dead ends (the pin
  is where the track ends, at the pad's centre), the extra vias carry no loop
  current, and --plane In1.Cu gives the same ideal plane as the hand-written
  ``plane = "0"``.

The inductances come from ``parasite report``'s JSON for each file; the
hand-written file is the outside reference (written from the board drawing,
not from the importer).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from parasite.cli import main

ROOT = Path(__file__).resolve().parents[2]
KICAD = ROOT / "fixtures" / "kicad"
DEMO = ROOT / "fixtures" / "demo"


def _loops(netlist: Path, routes: Path) -> dict[str, float]:
    r = CliRunner().invoke(main, ["report", str(netlist), str(routes), "--format", "json", "-q"])
    assert r.exit_code == 0, r.output
    return {lp["name"]: lp["inductance"] for lp in json.loads(r.stdout)["loops"]}


def _import(tmp_path: Path, *args: str) -> Path:
    out = tmp_path / "imported.routes.toml"
    r = CliRunner().invoke(main, ["import", *args, "-o", str(out)])
    assert r.exit_code == 0, r.output
    return out


def test_rc_loop_import_matches_hand_written(tmp_path: Path) -> None:
    netlist = KICAD / "rc_loop.cir"
    out = _import(tmp_path, str(KICAD / "rc_loop.kicad_pcb"), "--netlist", str(netlist),
                  "--loop", "rc loop=V1:p,R1:1,R1:2,C1:1,C1:2,V1:n")
    got = _loops(netlist, out)["rc loop"]
    want = _loops(netlist, KICAD / "rc_loop.routes.toml")["rc loop"]
    assert got == pytest.approx(want, rel=5e-3)
    assert 5e-9 < want < 50e-9  # a 40 mm loop of 0.5 mm tracks: some tens of nH (common practice)


@pytest.mark.slow
def test_demo_board_import_matches_hand_written_demo(tmp_path: Path) -> None:
    netlist = DEMO / "buck.cir"
    out = _import(tmp_path, str(KICAD / "buck.kicad_pcb"), "--netlist", str(netlist),
                  "--pin-map", str(KICAD / "buck.pinmap.toml"), "--plane", "In1.Cu", "--no-pours",
                  "--loop", "hot loop=CIN1:1,M1:d,M1:s,M2:d,M2:s,CIN1:2;limit=3n;frequency=100meg",
                  "--loop", "low-side gate loop=VDRV2:p,RG2:1,RG2:2,M2:g,M2:s,VDRV2:n;limit=10n")
    got = _loops(netlist, out)
    want = _loops(netlist, DEMO / "buck.routes.toml")
    assert set(got) == set(want)
    for name in want:
        assert got[name] == pytest.approx(want[name], rel=0.05), name
