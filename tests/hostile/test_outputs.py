"""Outputs of a command (issue 19): every output is checked before any is
written, a failing command leaves nothing, and a command never overwrites a
file it read, including a file the netlist includes (ngspice's .include and
.lib read files the same way). Common practice for command-line tools; the
contract is docs/command-line.md "Outputs"."""

from __future__ import annotations

import pytest

from tests.hostile.helpers import BOARD_CIR, board_routes, put, run_cli


@pytest.fixture
def board(tmp_path):
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes())
    return tmp_path


@pytest.mark.parametrize("args, needle", [
    (("-o", "."), "folder"),
    (("-o", "sub"), "folder"),
    (("-o", ""), "empty"),
    (("-o", "missing_dir/out.cir", "--report", "report.json"), "does not exist"),
    (("-o", "x.cir", "--report", "x.cir"), "two outputs"),
    (("-o", "-", "--report", "-"), "standard output"),
    (("-o", "b.routes.toml"), "input"),
])
def test_bad_outputs_are_refused_and_nothing_is_written(board, args, needle):
    (board / "sub").mkdir()
    r = run_cli(board, "augment", "b.cir", "b.routes.toml", "-q", *args)
    assert r.code == 1, r.stderr
    assert needle in r.stderr or "same file" in r.stderr
    assert not r.written
    assert "Traceback" not in r.stderr


def test_an_included_file_is_never_overwritten(tmp_path):
    put(tmp_path, "inc.cir", "R2 b 0 10\n")
    put(tmp_path, "b.cir", "hostile test board (invented)\nV1 a 0 DC 1\nR1 a b 10\n"
                           ".include inc.cir\n.end\n")
    put(tmp_path, "b.routes.toml", board_routes())
    for cmd in (("augment", "b.cir", "b.routes.toml", "-o", "inc.cir"),
                ("augment", "b.cir", "b.routes.toml", "-o", "ok.cir", "--report", "inc.cir"),
                ("report", "b.cir", "b.routes.toml", "-o", "inc.cir")):
        r = run_cli(tmp_path, *cmd, "-q")
        assert r.code == 1, (cmd, r.stderr)
        assert "inc.cir" in r.stderr and not r.written, cmd


def test_both_outputs_written_together_on_success(board):
    r = run_cli(board, "augment", "b.cir", "b.routes.toml", "-q", "-o", "o.cir",
                "--report", "r.json")
    assert r.code == 0, r.stderr
    assert r.written == {"o.cir", "r.json"}
