"""The augment and report commands as a makefile runs them: exit codes,
byte-identical pass-through, determinism, refusal to overwrite inputs."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from parasite.cli import main
from tests.boards import DEMO as DEMO_DIR
from tests.boards import FIXTURES

DEMO = DEMO_DIR
NO_COPPER = """format = "parasite-routes/1"
units = "mm"

[layers.top]
z = 1.565
thickness = 0.035
"""


def _run(*args: str) -> subprocess.CompletedProcess[bytes]:
    return subprocess.run([sys.executable, "-m", "parasite", *args], capture_output=True, timeout=300)


def test_no_copper_gives_the_input_back_byte_for_byte(tmp_path: Path) -> None:
    """With a routes file that places no copper the output is the input, byte
    for byte (command-line contract), also for CRLF and odd-case netlists."""
    fixtures = FIXTURES / "netlists"
    routes = tmp_path / "empty.routes.toml"
    routes.write_text(NO_COPPER)
    for netlist in sorted(fixtures.glob("*.cir"))[:6] + [DEMO / "buck.cir"]:
        out = tmp_path / (netlist.stem + ".out.cir")
        r = CliRunner().invoke(main, ["augment", str(netlist), str(routes), "-o", str(out)])
        assert r.exit_code == 0, r.output
        assert out.read_bytes() == netlist.read_bytes(), netlist.name


def test_augment_is_deterministic_and_to_stdout(tmp_path: Path) -> None:
    """Same inputs, same bytes (two separate processes); `-o -` is standard
    output with nothing else on it."""
    a = _run("augment", str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"), "-o", "-", "-q")
    b = _run("augment", str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"), "-q")
    assert a.returncode == 0, a.stderr.decode()
    assert a.stdout == b.stdout
    assert a.stdout.startswith(DEMO.joinpath("buck.cir").read_bytes().splitlines(keepends=True)[0])
    assert b"parasite: copper from buck.routes.toml" in a.stdout


def test_refuses_to_overwrite_an_input(tmp_path: Path) -> None:
    """An output path equal to an input is refused with exit 1 and the input is untouched."""
    net = tmp_path / "buck.cir"
    shutil.copy(DEMO / "buck.cir", net)
    before = net.read_bytes()
    r = _run("augment", str(net), str(DEMO / "buck.routes.toml"), "-o", str(net))
    assert r.returncode == 1
    assert b"refusing to overwrite the input" in r.stderr
    assert net.read_bytes() == before
    r = _run("augment", str(net), str(DEMO / "buck.routes.toml"), "-o", str(tmp_path / "x.cir"),
             "--report", str(net))
    assert r.returncode == 1
    assert not (tmp_path / "x.cir").exists()


def test_bad_input_exit_1_names_file_and_writes_nothing(tmp_path: Path) -> None:
    """A malformed routes file: exit 1, `FILE: KEY: error:` or `FILE:LINE: error:`
    on standard error, no traceback, no output file."""
    routes = tmp_path / "bad.routes.toml"
    routes.write_text(NO_COPPER
                      + "\n[[trace]]\nnet = \"sw\"\nlayer = \"top\"\nwidth = -1\npoints = [[0,0],[1,0]]\n")
    out = tmp_path / "out.cir"
    r = _run("augment", str(DEMO / "buck.cir"), str(routes), "-o", str(out))
    assert r.returncode == 1
    err = r.stderr.decode()
    assert str(routes) in err and "trace[0].width" in err and "error" in err
    assert "Traceback" not in err
    assert not out.exists()


def test_bad_command_line_exit_2() -> None:
    r = _run("augment", "--min-coupling", "2", "a.cir", "b.routes.toml")
    assert r.returncode == 2


def test_report_json_keys_and_units(tmp_path: Path) -> None:
    """The JSON report has the contract's keys; k = M / sqrt(La Lb) for every
    listed coupling (definition in the command-line contract)."""
    r = _run("report", str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"), "--format", "json", "-q")
    assert r.returncode == 0, r.stderr.decode()
    rep = json.loads(r.stdout)
    assert rep["format"] == "parasite-report/1"
    for key in ("segments", "couplings", "loops", "summary", "warnings"):
        assert key in rep
    seg = {s["id"]: s for s in rep["segments"]}
    for s in rep["segments"]:
        assert s["kind"] in ("trace", "via", "probe")
        assert s["inductance"] > 0 and s["resistance"] > 0
    for c in rep["couplings"]:
        la, lb = seg[c["a"]]["inductance"], seg[c["b"]]["inductance"]
        assert c["k"] == pytest.approx(c["mutual"] / (la * lb) ** 0.5, rel=1e-9)
    sm = rep["summary"]
    assert sm["passive"] is True and sm["min_eigenvalue"] > 0
    assert sm["segments"] == len(rep["segments"])
