"""Which copper model `augment` writes (`--model auto|full|reduced`).

The sizes compared are counted from the written netlist itself (inductor and
coupling cards), not taken from the report; the accuracy of the reduced model is
checked in tests/network/test_reduce.py against an independent solve.
"""

from __future__ import annotations

import json
import re
import sys
from pathlib import Path

from click.testing import CliRunner

from parasite.cli import main
from tests.boards import ROOT

sys.path.insert(0, str(ROOT / "benchmarks"))
from bench_threshold import board  # noqa: E402

DEMO = ROOT / "fixtures" / "demo"


def _count(text: str, letter: str) -> int:
    return len(re.findall(rf"^{letter}\S*\s", text, re.IGNORECASE | re.MULTILINE))


def _run(tmp_path: Path, cir: Path, routes: Path, model: str) -> tuple[str, dict]:
    out, rep = tmp_path / f"{model}.cir", tmp_path / f"{model}.json"
    res = CliRunner().invoke(main, ["augment", str(cir), str(routes), "-o", str(out),
                                    "--model", model, "--report", str(rep), "-q"])
    assert res.exit_code == 0, res.output
    return out.read_text(), json.loads(rep.read_text())["model"]


def test_auto_keeps_full_model_on_the_demo(tmp_path: Path) -> None:
    """The demo has two independent meshes and 18 ports: the reduced model has
    more inductor and coupling cards than the full one, so auto writes the full
    one (no subcircuit), and --model reduced forces the subcircuit. Common
    practice: a macromodel is only worth writing when it is smaller."""
    cir, routes = DEMO / "buck.cir", DEMO / "buck.routes.toml"
    auto, m_auto = _run(tmp_path, cir, routes, "auto")
    red, m_red = _run(tmp_path, cir, routes, "reduced")
    assert m_auto["written"] == "full" and ".subckt parasite_copper" not in auto.lower()
    assert m_red["written"] == "reduced" and ".subckt parasite_copper" in red.lower()
    assert _count(red, "L") + _count(red, "K") > _count(auto, "L") + _count(auto, "K")
    assert m_red["passivity"]["passive"] and m_red["ports"] == 18


def test_auto_writes_reduced_model_on_a_meshed_board(tmp_path: Path) -> None:
    """A board with ladder returns (many meshes, 6 ports): auto writes the
    subcircuit, which has at most half the inductor and coupling cards of
    --model full with every coupling; the report gives order < full order and
    a largest fitted error within the stated tolerance."""
    routes, netlist = board(3, ladder=True)
    (tmp_path / "b.cir").write_text(netlist + ".end\n")
    (tmp_path / "b.routes.toml").write_text(routes)
    cir, rt = tmp_path / "b.cir", tmp_path / "b.routes.toml"
    auto, m = _run(tmp_path, cir, rt, "auto")
    res = CliRunner().invoke(main, ["augment", str(cir), str(rt), "-o", str(tmp_path / "f.cir"),
                                    "--model", "full", "--min-coupling", "0", "-q"])
    assert res.exit_code == 0, res.output
    full = (tmp_path / "f.cir").read_text()
    assert m["written"] == "reduced" and ".subckt parasite_copper" in auto.lower()
    assert 2 * (_count(auto, "L") + _count(auto, "K")) <= _count(full, "L") + _count(full, "K")
    assert 0 < m["order"] < m["full_order"] and m["max_error"] <= m["tolerance"]
    assert len(m["error_over_frequency"]) == 42


def test_unknown_model_is_a_usage_error(tmp_path: Path) -> None:
    """click's choice check: exit 2, nothing written."""
    out = tmp_path / "o.cir"
    res = CliRunner().invoke(main, ["augment", str(DEMO / "buck.cir"),
                                    str(DEMO / "buck.routes.toml"), "-o", str(out),
                                    "--model", "tiny", "-q"])
    assert res.exit_code == 2 and not out.exists()


def test_broadband_goes_with_the_full_model(tmp_path: Path) -> None:
    """The ladders are written per branch: on a board where auto would reduce,
    --broadband writes every branch's ladder and the report says why; --model
    reduced with --broadband is a command-line error (exit 2, the contract's code
    for a wrong command line) and writes nothing."""
    routes, netlist = board(3, ladder=True)
    (tmp_path / "b.cir").write_text(netlist + ".end\n")
    (tmp_path / "b.routes.toml").write_text(routes)
    cir, rt = tmp_path / "b.cir", tmp_path / "b.routes.toml"
    out, rep = tmp_path / "w.cir", tmp_path / "w.json"
    res = CliRunner().invoke(main, ["augment", str(cir), str(rt), "-o", str(out),
                                    "--broadband", "--report", str(rep), "-q"])
    assert res.exit_code == 0, res.output
    report = json.loads(rep.read_text())
    assert report["model"]["written"] == "full" and "ladder" in report["model"]["rule"]
    assert ".subckt parasite_copper" not in out.read_text().lower()
    bad = tmp_path / "r.cir"
    res = CliRunner().invoke(main, ["augment", str(cir), str(rt), "-o", str(bad),
                                    "--broadband", "--model", "reduced", "-q"])
    assert res.exit_code == 2 and not bad.exists()
