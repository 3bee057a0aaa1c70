"""``parasite import`` on the command line: errors with file and place and
nothing written, selections, and the import without a netlist.

The board facts checked here (which pads are on which nets, where the copper
is) are those of the fixture boards, whose pads pcbnew places where the tests
expect them (tests/geometry/test_kicad_pcbnew.py); the error format is the
project's command-line contract (docs/command-line.md: ``FILE:LINE: error:``,
exit 1, nothing written).
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from parasite.cli import main

if sys.version_info >= (3, 11):
    import tomllib
else:  # Python 3.10
    import tomli as tomllib

ROOT = Path(__file__).resolve().parents[2]
KICAD = ROOT / "fixtures" / "kicad"
BUCK = KICAD / "buck.kicad_pcb"
RC = KICAD / "rc_loop.kicad_pcb"


def run(*args: str) -> tuple[int, str, str]:
    r = CliRunner().invoke(main, list(args))
    return r.exit_code, r.stdout, r.stderr


def _pad_line(board: Path, reference: str, number: str) -> int:
    lines = board.read_text().splitlines()
    fp = next(i for i, s in enumerate(lines) if f'"parasite_fixtures:{reference}"' in s)
    return next(i for i in range(fp, len(lines)) if lines[i].strip().startswith(f'(pad "{number}"')) + 1


def test_pad_net_against_the_netlist(tmp_path: Path) -> None:
    """Without the pin map, M1's pads are read by position (pad 3 = the card's
    third node, the source on 'sw'), but pad 3 is on the board net VIN with
    the supply's 'vin': exit 1 naming both terminals, the pad's line, nothing
    written."""
    out = tmp_path / "x.routes.toml"
    code, _, err = run("import", str(BUCK), "--netlist", str(ROOT / "fixtures/demo/buck.cir"),
                       "--plane", "In1.Cu", "--no-pours", "-o", str(out))
    assert code == 1
    line = _pad_line(BUCK, "M1", "3")
    assert f"{BUCK}:{line}: error: board net 'VIN' joins two different netlist nodes" in err
    assert "VIN:p on node 'vin'" in err and "M1:s on node 'sw'" in err
    assert not out.exists()


def test_zone_fills_become_pours(tmp_path: Path) -> None:
    """Without --plane and --no-pours every zone fill is written as a
    ``[[pour]]``: the In1.Cu ground fill and the B.Cu pour with its two
    openings, rebuilt as holes of the sizes the fixture's generator drew
    (2 x 2 mm and 2.5 x 2 mm: fixtures/kicad/make_boards.py; areas by
    shapely/GEOS). The file loads as a routes file."""
    from shapely.geometry import Polygon

    from geometry.routes import load_routes

    out = tmp_path / "x.routes.toml"
    code, _, err = run("import", str(BUCK), "--netlist", str(ROOT / "fixtures/demo/buck.cir"),
                       "--pin-map", str(KICAD / "buck.pinmap.toml"), "-o", str(out))
    assert code == 0, err
    routes = load_routes(out)
    by_layer = {p.layer: p for p in routes.pours}
    assert set(by_layer) == {"in1", "bottom"} and {p.net for p in routes.pours} == {"0"}
    holes = sorted(Polygon(h).area * 1e6 for h in by_layer["bottom"].holes)
    assert holes == pytest.approx([4.0, 5.0], rel=1e-9)
    text = out.read_text()
    assert "# GND on B.Cu, board line" in text


@pytest.mark.parametrize(("cut", "words"), [
    (lambda t: t[: t.index("\n", len(t) // 2)], "the file ends inside"),
    (lambda t: t.replace("(version 20211014)", "(version 20200101)"), "version 20200101"),
    (lambda t: t.replace("(net 0 \"\")", "(net 0 \"\"))", 1), "closes the top-level list"),
])
def test_bad_board_files(tmp_path: Path, cut, words: str) -> None:  # type: ignore[no-untyped-def]
    """Truncated file, unknown version, unbalanced parentheses: exit 1 with the
    file and line, nothing written."""
    bad = tmp_path / "bad.kicad_pcb"
    bad.write_text(cut(RC.read_text()))
    out = tmp_path / "x.routes.toml"
    code, _, err = run("import", str(bad), "-o", str(out))
    assert code == 1 and not out.exists()
    assert re.match(rf"{re.escape(str(bad))}:\d+: error: .*{re.escape(words)}", err), err


def test_without_netlist_report_and_plot_take_an_empty_netlist(tmp_path: Path) -> None:
    """No netlist: nodes named from the board's nets (GND is SPICE's 0),
    the mapping in the file's comments and on standard error, no pins; report
    and plot read the result with a netlist that has no elements."""
    out = tmp_path / "board.routes.toml"
    code, _, err = run("import", str(RC), "-o", str(out))
    assert code == 0, err
    text = out.read_text()
    assert "#   'MID' -> mid" in text and "#   'GND' -> 0" in text
    data = tomllib.loads(text)
    assert "pin" not in data
    assert {t["net"] for t in data["trace"]} == {"in", "mid", "0"}
    assert "board net 'IN' -> node in" in err
    empty = tmp_path / "empty.cir"
    empty.write_text("* no elements yet\n.end\n")
    code, report, err = run("report", str(empty), str(out), "-q")
    assert code == 0, err
    assert "Nets with copper: 3" in report
    png = tmp_path / "board.png"
    code, _, err = run("plot", str(empty), str(out), "-o", str(png), "-q")
    assert code == 0, err
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_nets_selection_and_unmatched_net(tmp_path: Path) -> None:
    """A netlist with V1 and R1 only: MID meets R1:2 so it is matched; a
    netlist with V1 only leaves MID unmatched, which is reported and left out,
    or imported under the name --nets gives it."""
    only_v = tmp_path / "v.cir"
    only_v.write_text("* source only\nV1 in 0 1\n.end\n")
    out = tmp_path / "a.routes.toml"
    code, _, err = run("import", str(RC), "--netlist", str(only_v), "-o", str(out))
    assert code == 0, err
    assert "board net 'MID' meets no netlist terminal: left out" in err
    data = tomllib.loads(out.read_text())
    assert {t["net"] for t in data["trace"]} == {"in", "0"}
    assert [p["terminal"] for p in data["pin"]] == ["V1:p", "V1:n"]
    out2 = tmp_path / "b.routes.toml"
    code, _, err = run("import", str(RC), "--netlist", str(only_v), "--nets", "MID=mid_copper",
                       "-o", str(out2))
    assert code == 0, err
    data = tomllib.loads(out2.read_text())
    assert {t["net"] for t in data["trace"]} == {"mid_copper"}
    assert "pin" not in data


def test_area_crop(tmp_path: Path) -> None:
    """--area keeps copper wholly inside the rectangle: on the rc board the box
    x 9..13, y 1..7 mm holds the arc, C1's pads, the top ground track and the
    via, and nothing of the input track (x 2..8)."""
    out = tmp_path / "c.routes.toml"
    code, _, err = run("import", str(RC), "--area", "9,1,13,7", "-o", str(out))
    assert code == 0, err
    data = tomllib.loads(out.read_text())
    xs = [p[0] for t in data["trace"] for p in t["points"]]
    assert min(xs) >= 9 and max(xs) <= 13
    assert {t["net"] for t in data["trace"]} == {"mid", "0"}
    assert [v["at"] for v in data["via"]] == [[10, 2]]


def test_refuses_to_write_over_an_input(tmp_path: Path) -> None:
    board = tmp_path / "b.kicad_pcb"
    board.write_bytes(RC.read_bytes())
    code, _, err = run("import", str(board), "-o", str(board))
    assert code == 1 and "refusing to overwrite the input" in err
    assert board.read_bytes() == RC.read_bytes()


@pytest.mark.ngspice
def test_imported_board_augments_and_simulates(tmp_path: Path) -> None:
    """The imported file is an ordinary routes file: augment writes a netlist
    that ngspice runs (the real simulator), with the copper's R and L cards."""
    import shutil
    import subprocess

    if shutil.which("ngspice") is None:
        pytest.skip("ngspice is not installed")
    routes = tmp_path / "rc.routes.toml"
    netlist = KICAD / "rc_loop.cir"
    code, _, err = run("import", str(RC), "--netlist", str(netlist), "-o", str(routes))
    assert code == 0, err
    aug = tmp_path / "rc.augmented.cir"
    code, _, err = run("augment", str(netlist), str(routes), "-o", str(aug), "-q")
    assert code == 0, err
    text = aug.read_text()
    assert re.search(r"^L\S+ ", text, re.M) and re.search(r"^R\S+ ", text, re.M)
    res = subprocess.run(["ngspice", "-b", str(aug)], capture_output=True, text=True, timeout=120,
                         cwd=tmp_path)
    assert res.returncode == 0, res.stderr[-2000:]
