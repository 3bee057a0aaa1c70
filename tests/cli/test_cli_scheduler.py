"""``--scheduler ADDRESS`` on the subcommands: the same bytes on a Dask cluster.

Reference: the in-process run of the same command on the same files (the claim
tested is that where the independent solves run does not change a single byte of
what is written). The cluster is a real ``distributed.LocalCluster`` of two worker
processes, one thread each, never a mock; the scheduler's own record of the tasks
it ran shows that the work did go to it. The board is the generated one of
benchmarks/bench_threshold.py with ladder returns (invented), where ``--model
auto`` writes the reduced model, so the full network's port impedance at every
frequency point of the reduction's check is solved on the workers.
"""

from __future__ import annotations

import json
import socket
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from parasite.cli import EXIT_INPUT_ERROR, main
from parasite.schedule import ENV
from tests.boards import ROOT

sys.path.insert(0, str(ROOT / "benchmarks"))
from bench_threshold import board  # noqa: E402


def _files(tmp_path: Path) -> tuple[str, str]:
    routes, netlist = board(3, ladder=True)
    cir, rt = tmp_path / "b.cir", tmp_path / "b.routes.toml"
    cir.write_text(netlist + ".end\n")
    rt.write_text(routes)
    return str(cir), str(rt)


def _augment(cir: str, rt: str, out: Path, *extra: str) -> tuple[bytes, bytes]:
    res = CliRunner().invoke(main, ["augment", cir, rt, "-o", str(out / "a.cir"), "--report",
                                    str(out / "a.json"), "-q", *extra])
    assert res.exit_code == 0, res.output
    return (out / "a.cir").read_bytes(), (out / "a.json").read_bytes()


def _report(cir: str, rt: str, out: Path, *extra: str) -> bytes:
    res = CliRunner().invoke(main, ["report", cir, rt, "--format", "json", "-o",
                                    str(out / "r.json"), "-q", *extra])
    assert res.exit_code == 0, res.output
    return (out / "r.json").read_bytes()


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_local_cluster_gives_the_same_bytes(tmp_path: Path,
                                            monkeypatch: pytest.MonkeyPatch) -> None:
    """augment (netlist and report) and report on a LocalCluster of two worker
    processes are byte-identical to the in-process run; --scheduler overrides an
    unreachable $PARASITE_SCHEDULER, and --scheduler '' runs in process."""
    distributed = pytest.importorskip("distributed")
    cir, rt = _files(tmp_path)
    (tmp_path / "here").mkdir()
    (tmp_path / "there").mkdir()
    (tmp_path / "empty").mkdir()
    monkeypatch.delenv(ENV, raising=False)
    net_here, rep_here = _augment(cir, rt, tmp_path / "here")
    report_here = _report(cir, rt, tmp_path / "here")
    assert json.loads(rep_here)["model"]["written"] == "reduced"
    monkeypatch.setenv(ENV, f"tcp://127.0.0.1:{_free_port()}")  # nothing listens there
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        address = cluster.scheduler_address
        net_there, rep_there = _augment(cir, rt, tmp_path / "there", "--scheduler", address)
        report_there = _report(cir, rt, tmp_path / "there", "--scheduler", address)
        ran = {str(k) for k in cluster.scheduler.task_prefixes}
    assert "apply" in ran  # run_map's per-item tasks (the frequency points) ran there
    assert net_there == net_here
    assert rep_there == rep_here
    assert report_there == report_here
    net_empty, rep_empty = _augment(cir, rt, tmp_path / "empty", "--scheduler", "")
    assert (net_empty, rep_empty) == (net_here, rep_here)


@pytest.mark.parametrize("command", ["augment", "report", "check", "ring"])
def test_unreachable_scheduler_is_a_clear_error(tmp_path: Path, command: str) -> None:
    """A scheduler address where nothing listens: exit 1 (the run cannot be done as
    asked, as with an input in error; the same address may come from the environment,
    so it is not a usage error), a message naming the address and how to start a
    scheduler, and no output file."""
    cir, rt = _files(tmp_path)
    address = f"tcp://127.0.0.1:{_free_port()}"
    out = tmp_path / "out.txt"
    args = [command, cir, rt, "--scheduler", address, "-q"]
    if command != "check":
        args += ["-o", str(out)]
    if command == "ring":
        args += ["--node", "a0"]
    res = CliRunner().invoke(main, args)
    assert res.exit_code == EXIT_INPUT_ERROR, res.output
    assert address in res.output and "dask scheduler" in res.output
    assert not out.exists()
    bad = CliRunner().invoke(main, ["report", cir, rt, "--scheduler", "tcp://nohostport",
                                    "-o", str(out), "-q"])
    assert bad.exit_code == EXIT_INPUT_ERROR and "tcp://HOST:PORT" in bad.output
    assert not out.exists()


def test_fast_report_on_a_local_cluster_gives_the_same_bytes(tmp_path: Path,
                                                             monkeypatch: pytest.MonkeyPatch
                                                             ) -> None:
    """``report --inductance fast`` and ``augment --inductance fast``
    (fixtures/routes/pour_plane: a trace over a meshed pour) with the near field's blocks
    of rows and the reduced model's port solves computed on a LocalCluster of two worker
    processes are byte-identical to the in-process run, and the work did run there."""
    distributed = pytest.importorskip("distributed")
    cir = str(ROOT / "fixtures" / "routes" / "pour_plane.cir")
    rt = str(ROOT / "fixtures" / "routes" / "pour_plane.routes.toml")
    monkeypatch.delenv(ENV, raising=False)
    (tmp_path / "here").mkdir()
    (tmp_path / "there").mkdir()
    here = _report(cir, rt, tmp_path / "here", "--inductance", "fast")
    net_here, rep_here = _augment(cir, rt, tmp_path / "here", "--inductance", "fast")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        there = _report(cir, rt, tmp_path / "there", "--inductance", "fast", "--scheduler",
                        cluster.scheduler_address)
        net_there, rep_there = _augment(cir, rt, tmp_path / "there", "--inductance", "fast",
                                        "--scheduler", cluster.scheduler_address)
        ran = {str(k) for k in cluster.scheduler.task_prefixes}
    assert "apply" in ran
    assert json.loads(here)["inductance"]["method"] == "fast"
    assert there == here
    # augment's reduced model: its exact port solves (one item per port) ran there too
    assert json.loads(rep_here)["model"]["steps"]
    assert (net_there, rep_there) == (net_here, rep_here)
