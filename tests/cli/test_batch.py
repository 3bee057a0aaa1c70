"""A batch of boards through the scheduling seam (parasite.batch): each board's report
is what ``parasite report --format json`` writes for it (the reference: the command
line, run on the same files; to 1e-9 relative or 1e-20 absolute, as the batch's items run with one BLAS
and OpenMP thread, the command line with all of them, so sums may round differently),
and the same bytes in process and on a Dask LocalCluster of two worker processes (a
real cluster, never a mock)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner

from parasite.batch import report_boards
from parasite.cli import main
from parasite.errors import ParasiteError
from parasite.schedule import ENV
from tests.boards import ROOT

ROUTES = ROOT / "fixtures" / "routes"


def _cli(cir: Path, rt: Path, out: Path, inductance: str) -> bytes:
    res = CliRunner().invoke(main, ["report", str(cir), str(rt), "--format", "json",
                                    "--inductance", inductance, "-o", str(out), "-q"])
    assert res.exit_code == 0, res.output
    return out.read_bytes()


def _close(a: Any, b: Any, path: str = "") -> None:
    """The same JSON document, numbers within 1e-9 relative or 1e-20 absolute (the
    rounding noise of sums that cancel, such as a flat loop's dipole moment along z);
    the reduced model's relative errors (dimensionless differences of nearly equal
    impedances) within 1e-12 absolute."""
    if isinstance(a, dict):
        assert a.keys() == b.keys(), path
        for k in a:
            _close(a[k], b[k], f"{path}/{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            _close(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and not isinstance(b, bool):
        if "/model/" in path and "error" in path:
            assert b == pytest.approx(a, rel=0, abs=1e-12), path
        else:
            assert b == pytest.approx(a, rel=1e-9, abs=1e-20), path
    else:
        assert a == b, path


def test_batch_of_boards_matches_the_command_line_here_and_on_a_cluster(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    distributed = pytest.importorskip("distributed")
    monkeypatch.delenv(ENV, raising=False)
    pour = (ROUTES / "pour_plane.cir", ROUTES / "pour_plane.routes.toml")
    boards = [pour, pour]
    here = {how: report_boards(boards, inductance=how) for how in ("dense", "fast")}
    for how, got in here.items():
        ref = json.loads(_cli(*pour, tmp_path / f"{how}.json", how))
        assert got[0] == got[1]
        _close(ref, json.loads(got[0]))
    assert json.loads(here["fast"][0])["inductance"]["method"] == "fast"
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        there = {how: report_boards(boards, inductance=how,
                                    scheduler=cluster.scheduler_address)
                 for how in ("dense", "fast")}
        ran = {str(k) for k in cluster.scheduler.task_prefixes}
    assert "apply" in ran
    assert there["fast"] == here["fast"]
    # the dense path's eigen decompositions: the same bytes only when this process's
    # OpenBLAS also started with one thread, as Dask's workers do (measured: with
    # OPENBLAS_NUM_THREADS=1 no difference; without, 4e-13 relative in the minimum
    # eigenvalue), so here to rounding
    _close(json.loads(here["dense"][0]), json.loads(there["dense"][0]))


def test_a_bad_board_in_a_batch_is_the_error_naming_its_file(tmp_path: Path) -> None:
    bad = tmp_path / "bad.routes.toml"
    bad.write_text('format = "parasite-routes/1"\nunits = "furlongs"\n')
    with pytest.raises(ParasiteError) as info:
        report_boards([(ROUTES / "pour_plane.cir", bad)], inductance="dense")
    assert "bad.routes.toml" in str(info.value)
