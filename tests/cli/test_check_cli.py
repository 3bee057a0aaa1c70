"""``parasite check`` the way a makefile runs it: a real process, exit codes
0 (within budget), 3 (over), 1 (bad input), and make stopping on 3.

The limits are set around Grover's rectangle formula for the loop (Grover,
*Inductance Calculations*, 1946, ch. 16; self-GMD of a rectangle
0.2235 (w + t), Grover ch. 3, Table 1): 25% above it must pass and 25% below
it must fail. The extraction agrees with the formula far closer than that for
this loop (see test_loops_pipeline.py, 3%), so the outcome does not hang on the
extraction's last digit.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from tests.loops.test_loops_pipeline import RECT_NET, grover_rectangle, rect_routes

PARASITE = [sys.executable, "-m", "parasite"]
REF = grover_rectangle(0.040, 0.020, 0.2235 * (1e-3 + 35e-6))


def files(tmp_path: Path, limit: str) -> tuple[str, str]:
    (tmp_path / "board.cir").write_text(RECT_NET)
    (tmp_path / "board.routes.toml").write_text(rect_routes(limit))
    return "board.cir", "board.routes.toml"


def run(tmp_path: Path, *args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(PARASITE + list(args), cwd=tmp_path, capture_output=True, text=True,
                          timeout=120)


def test_within_budget_exits_0_and_prints_the_table(tmp_path):
    net, routes = files(tmp_path, f"{1.25 * REF:.6e}")
    p = run(tmp_path, "check", net, routes)
    assert p.returncode == 0, p.stderr
    lines = p.stdout.splitlines()
    assert lines[0].split()[:3] == ["loop", "inductance", "resistance"]
    assert lines[1].startswith("rect ") and " ok " in lines[1]
    assert "nH" in lines[1]
    # not a terminal: no progress; the one warning is the board's own (the port's
    # two nets overlap at the cut), printed as every subcommand prints warnings
    assert [ln for ln in p.stderr.splitlines() if "overlaps copper of net" not in ln] == []


def test_over_budget_exits_3_naming_loop_value_and_limit(tmp_path):
    limit = 0.75 * REF
    net, routes = files(tmp_path, f"{limit:.6e}")
    p = run(tmp_path, "check", net, routes, "--quiet")
    assert p.returncode == 3
    assert " OVER " in p.stdout
    # What to move first: the largest terms, led by the uncut 39.5 mm bottom side.
    block = p.stdout.split("rect: ")[1].splitlines()
    assert block[0].endswith("largest terms")
    assert block[1].split() == ["segment", "term", "share", "entry"]
    assert block[2].split()[0] == "b.3" and block[2].split()[-1] == "trace[1]"
    assert sum(1 for line in block if line.endswith("mutual")) == 3
    line = p.stderr.strip()
    assert line.startswith("board.routes.toml:")
    assert "loop 'rect' is over its limit: " in line
    value_text, limit_text = line.split("over its limit: ")[1].split(" > ")
    assert limit_text == f"{1e9 * limit:.4g} nH"
    value = float(value_text.removesuffix(" nH")) * 1e-9
    assert value == pytest.approx(REF, rel=0.03)


def test_spice_style_limit_and_a_loop_without_limit(tmp_path):
    """A limit written "2n" is 2 nH (SPICE suffixes); a loop without limit never fails."""
    net, routes = files(tmp_path, '"2n"')
    p = run(tmp_path, "check", net, routes)
    assert p.returncode == 3
    assert p.stderr.strip().endswith("> 2 nH")
    net, routes = files(tmp_path, "")
    p = run(tmp_path, "check", net, routes)
    assert p.returncode == 0
    assert "no limit" in p.stdout


def test_bad_input_exits_1_with_file_and_place(tmp_path):
    net, routes = files(tmp_path, f"{REF:.6e}")
    text = (tmp_path / routes).read_text().replace("width = 1.0", "width = -1.0", 1)
    (tmp_path / routes).write_text(text)
    p = run(tmp_path, "check", net, routes)
    assert p.returncode == 1
    assert p.stdout == ""
    assert p.stderr.startswith("board.routes.toml:")
    assert "trace[0].width" in p.stderr


@pytest.mark.skipif(shutil.which("make") is None, reason="make is not installed")
@pytest.mark.parametrize(("factor", "make_ok"), [(1.25, True), (0.75, False), (None, False)])
def test_make_stops_before_the_next_step(tmp_path, factor, make_ok):
    """A makefile rule 'check' before 'order': make stops (exit 2, 'Error 3'
    or 'Error 1') and the next step never runs when check fails."""
    limit = f"{factor * REF:.6e}" if factor else ""
    net, routes = files(tmp_path, limit)
    if factor is None:  # bad input: a loop through an unknown element
        text = (tmp_path / routes).read_text().replace('"C1:2"', '"C9:2"')
        (tmp_path / routes).write_text(text)
    cmd = " ".join(PARASITE)
    (tmp_path / "Makefile").write_text(
        f"order: check\n\ttouch ordered\n\ncheck:\n\t{cmd} check {net} {routes}\n")
    p = subprocess.run(["make", "-s", "order"], cwd=tmp_path, capture_output=True, text=True,
                       timeout=120)
    assert (p.returncode == 0) is make_ok
    assert (tmp_path / "ordered").exists() is make_ok
    if factor == 0.75:
        assert "Error 3" in p.stderr and "loop 'rect' is over its limit" in p.stderr
    if factor is None:
        assert "Error 1" in p.stderr and "loop[0].path[4]" in p.stderr

