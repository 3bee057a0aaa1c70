"""``--strict`` (warnings become errors, nothing written, exit 1) and
``augment --probes`` (which probes are attached), as a makefile runs them.

The references are the command-line contract (exit 1 for input in error,
nothing written) and the same command on a routes file edited by hand (the
probe entry cut out): the outputs must be identical byte for byte.
"""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner

from parasite.cli import main
from tests.boards import ROUTES

LOOPS_CIR = ROUTES / "loops.cir"
PROBE_CIR = ROUTES / "probe_resistor.cir"
PROBE_ROUTES = ROUTES / "probe_resistor.routes.toml"


def _trap_routes(tmp_path: Path) -> Path:
    """The loops fixture with a limit written as 1.5 (read as 1.5 H: a trap)."""
    text = (ROUTES / "loops.routes.toml").read_text().replace("limit = 4e-9", "limit = 1.5")
    assert "limit = 1.5" in text
    out = tmp_path / "trap.routes.toml"
    out.write_text(text)
    return out


def test_strict_turns_a_trap_into_an_error_and_writes_nothing(tmp_path: Path) -> None:
    """Without ``--strict`` the trap is a warning on standard error (file, line,
    key) and the output is written; with it, exit 1 and no file (contract:
    input in error writes nothing)."""
    routes = _trap_routes(tmp_path)
    runner = CliRunner()
    out = tmp_path / "out.cir"
    res = runner.invoke(main, ["augment", str(LOOPS_CIR), str(routes), "-o", str(out), "-q"])
    assert res.exit_code == 0, res.output
    assert f"{routes}:" in res.stderr and ": warning: loop[2].limit:" in res.stderr
    assert out.exists()
    out.unlink()
    res = runner.invoke(main, ["augment", str(LOOPS_CIR), str(routes), "-o", str(out), "-q",
                               "--strict"])
    assert res.exit_code == 1
    assert ": error: loop[2].limit:" in res.stderr and "read as 1.5 H" in res.stderr
    assert not out.exists()
    for cmd in (["check"], ["report"]):
        res = runner.invoke(main, [*cmd, str(LOOPS_CIR), str(routes), "-q", "--strict"])
        assert res.exit_code == 1, (cmd, res.output)
        assert ": error: loop[2].limit:" in res.stderr


def test_strict_passes_a_clean_board(tmp_path: Path) -> None:
    """The same fixture as bundled (no trap): ``--strict`` changes nothing."""
    runner = CliRunner()
    out = tmp_path / "out.cir"
    res = runner.invoke(main, ["augment", str(LOOPS_CIR), str(ROUTES / "loops.routes.toml"),
                               "-o", str(out), "-q", "--strict"])
    assert res.exit_code == 0, res.output
    assert out.read_bytes() == LOOPS_CIR.read_bytes()  # no copper: the input back


def _augment(tmp_path: Path, routes: Path, name: str, *extra: str) -> bytes:
    out = tmp_path / name
    res = CliRunner().invoke(main, ["augment", str(PROBE_CIR), str(routes), "-o", str(out), "-q",
                                    *extra])
    assert res.exit_code == 0, res.output
    return out.read_bytes()


def test_probes_none_is_the_board_without_its_probe_entry(tmp_path: Path) -> None:
    """``--probes none`` gives exactly the netlist of the routes file with the
    ``[[probe]]`` entry cut out by hand; ``--probes P1`` (case ignored) exactly
    the default, which attaches every probe."""
    text = PROBE_ROUTES.read_text()
    cut = tmp_path / "cut" / PROBE_ROUTES.name  # same name: the header names the file
    cut.parent.mkdir()
    cut.write_text(text[: text.index("[[probe]]")])
    without = _augment(tmp_path, cut, "cut.cir")
    assert _augment(tmp_path, PROBE_ROUTES, "none.cir", "--probes", "none") == without
    everything = _augment(tmp_path, PROBE_ROUTES, "all.cir")
    assert everything != without
    assert _augment(tmp_path, PROBE_ROUTES, "p1.cir", "--probes", "P1") == everything


def test_probes_unknown_name_is_a_usage_error(tmp_path: Path) -> None:
    """An unknown probe name: exit 2 (command line wrong), the probes of the
    file listed, nothing written."""
    out = tmp_path / "out.cir"
    res = CliRunner().invoke(main, ["augment", str(PROBE_CIR), str(PROBE_ROUTES), "-o", str(out),
                                    "--probes", "p1,p9"])
    assert res.exit_code == 2
    assert "'p9'" in res.output and "'p1'" in res.output
    assert not out.exists()


def test_frequency_option_with_a_milli_prefix_warns(tmp_path: Path) -> None:
    """``--frequency 300MHz`` is 0.3 Hz the SPICE way (ngspice manual 2.3): the
    option keeps that value (the report's summary says 0.3) and a warning on
    standard error says what it was read as; ``300meg`` does not warn."""
    import json

    runner = CliRunner()
    routes = str(ROUTES / "loops.routes.toml")
    res = runner.invoke(main, ["report", str(LOOPS_CIR), routes, "--format", "json", "-q",
                               "--frequency", "300MHz"])
    assert res.exit_code == 0, res.output
    assert "warning: --frequency: '300MHz' is read as 0.3 Hz" in res.stderr
    assert json.loads(res.stdout)["summary"]["frequency"] == 0.3
    res = runner.invoke(main, ["report", str(LOOPS_CIR), routes, "-q", "--frequency", "300meg"])
    assert res.exit_code == 0 and "warning" not in res.stderr
