"""The board reader against KiCad's own reading of the same files.

Reference: KiCad's Python board API (``pcbnew``, KiCad 6.0.11 from Debian
bookworm) loading each fixture board; its answers are recorded in
``fixtures/kicad/*.pcbnew.json`` by ``fixtures/kicad/pcbnew_reference.py``
(run with the system Python). The last test reruns that script when the
system Python has ``pcbnew`` and compares its fresh answers with the reader,
so the recorded data cannot drift from KiCad's.

Tolerances: pad positions 1 um (pcbnew holds coordinates as integer nm; the
files are written to 1 nm); lengths and areas 0.1% relative (floating-point
sums; the arc length is the exact circular arc on both sides).
"""

from __future__ import annotations

import json
import shutil
import subprocess
from collections import Counter, defaultdict
from pathlib import Path

import pytest

from geometry.kicad import read_board
from geometry.kicad.board import Board

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "kicad"
BOARDS = ["buck.kicad_pcb", "rc_loop.kicad_pcb"]


def _compare(board: Board, ref: dict) -> None:
    pads = {(p.reference, p.number): p for p in board.pads}
    assert len(pads) == len(ref["pads"])
    for r in ref["pads"]:
        p = pads[(r["reference"], r["number"])]
        assert p.at[0] * 1e3 == pytest.approx(r["x"], abs=1e-3), (r["reference"], r["number"])
        assert p.at[1] * 1e3 == pytest.approx(r["y"], abs=1e-3), (r["reference"], r["number"])
        assert (p.angle - r["angle"]) % 360 == pytest.approx(0, abs=1e-6)
        assert p.net == r["net"]
    lengths: dict[str, float] = defaultdict(float)
    for t in board.tracks:
        lengths[t.net] += t.length * 1e3
    assert set(lengths) == set(ref["track_length"])
    for net, length in ref["track_length"].items():
        assert lengths[net] == pytest.approx(length, rel=1e-3), net
    kinds = Counter(v.kind for v in board.vias)
    assert {k: kinds.get(k, 0) for k in ("through", "blind", "micro")} == ref["vias"]
    for z in ref["zones"]:
        zone = next(zz for zz in board.zones if zz.net == z["net"] and z["layer"] in zz.layers)
        area = sum(f.area for f in zone.fills.get(z["layer"], ())) * 1e6
        assert area == pytest.approx(z["area"], rel=1e-3), z


@pytest.mark.parametrize("name", BOARDS)
def test_reader_agrees_with_recorded_pcbnew(name: str) -> None:
    """Absolute pad positions, orientations and nets; track length per net;
    via counts by kind; zone fill areas (holes rebuilt from KiCad's zero-width
    cuts) against pcbnew's answers recorded in the JSON beside the board."""
    ref = json.loads((FIXTURES / name.replace(".kicad_pcb", ".pcbnew.json")).read_text())
    assert ref["source"].startswith("pcbnew 6.")
    _compare(read_board(FIXTURES / name), ref)


def test_buck_fixture_has_rebuilt_holes() -> None:
    """The B.Cu pour of the buck fixture is written as KiCad writes fills (one
    outline, two holes joined by zero-width cuts); the reader must give an
    outline and two separate holes, of the sizes the generator drew
    (2 x 2 mm and 2.5 x 2 mm: make_boards.py)."""
    board = read_board(FIXTURES / "buck.kicad_pcb")
    zone = next(z for z in board.zones if z.layers == ("B.Cu",))
    (fill,) = zone.fills["B.Cu"]
    assert len(fill.holes) == 2
    from geometry.kicad.polygons import signed_area

    assert sorted(abs(signed_area(h)) * 1e6 for h in fill.holes) == pytest.approx([4.0, 5.0], rel=1e-9)


def _system_python_with_pcbnew() -> str | None:
    exe = shutil.which("python3", path="/usr/bin")
    if exe is None:
        return None
    try:
        ok = subprocess.run([exe, "-c", "import pcbnew"], capture_output=True, timeout=60).returncode == 0
    except (OSError, subprocess.SubprocessError):
        return None
    return exe if ok else None


@pytest.mark.slow
@pytest.mark.parametrize("name", BOARDS)
def test_reader_agrees_with_live_pcbnew(name: str) -> None:
    """The same comparison with pcbnew run now (skipped when the system Python
    has no ``pcbnew``: install Debian's ``kicad`` package to run it)."""
    exe = _system_python_with_pcbnew()
    if exe is None:
        pytest.skip("KiCad's pcbnew module is not importable by /usr/bin/python3 (apt-get install kicad)")
    out = subprocess.run([exe, str(FIXTURES / "pcbnew_reference.py"), "--print", str(FIXTURES / name)],
                         capture_output=True, text=True, timeout=300, check=True).stdout
    _compare(read_board(FIXTURES / name), json.loads(out))


def test_fixture_files_are_what_the_generator_writes() -> None:
    """The committed boards are make_boards.py's output (so they stay in step
    with the demo; rerun the script and pcbnew_reference.py after a change)."""
    import importlib.util

    spec = importlib.util.spec_from_file_location("make_boards", FIXTURES / "make_boards.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    assert (FIXTURES / "buck.kicad_pcb").read_text() == module.buck()
    assert (FIXTURES / "rc_loop.kicad_pcb").read_text() == module.rc_loop()


def test_demo_pins_sit_on_the_board_pads_pcbnew_places() -> None:
    """Every pin of the hand-written demo routes file (fixtures/demo) lies on
    a pad that pcbnew places at the same point (KiCad frame: x + 100,
    100 - y mm, the board's auxiliary origin), on the pin's element: the board
    draws the demo, checked against KiCad rather than against the importer."""
    import sys

    if sys.version_info >= (3, 11):
        import tomllib
    else:  # Python 3.10
        import tomli as tomllib

    demo = tomllib.loads((FIXTURES.parent / "demo" / "buck.routes.toml").read_text())
    ref = json.loads((FIXTURES / "buck.pcbnew.json").read_text())
    for pin in demo["pin"]:
        element = pin["terminal"].split(":")[0]
        x, y = 100 + pin["at"][0], 100 - pin["at"][1]
        assert any(p["reference"] == element and abs(p["x"] - x) < 1e-3 and abs(p["y"] - y) < 1e-3
                   for p in ref["pads"]), pin["terminal"]
