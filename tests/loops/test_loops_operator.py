"""Loops on the fast path (the inductance operator: exact near field, multipole far
field, GMRES solves) against the dense path, and ``report`` / ``check`` with
``--inductance``.

Reference: the dense path (:func:`parasite.loops.loop_results` on the dense matrix,
itself checked against Grover's and Hoer & Love's closed forms, ngspice and modified
nodal analysis in tests/loops/test_loops_pipeline.py, tests/extract/). Tolerance: the
issue's 0.1 % on every loop inductance and resistance. The board is the invented
meshed power stage of benchmarks/bench_board_scale.py at a coarse cell.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from benchmarks.bench_board_scale import write_board
from parasite.cli import main
from parasite.loops import loop_results
from parasite.loops_operator import loop_results_operator
from parasite.pipeline import extract, extract_fast, load_inputs
from tests.boards import ROUTES

COARSE = 10.0  # mm: about 1,000 segments (the default run)
FINE = 4.0  # mm: about 3,100 segments (slow)


def _stage(folder: Path, cell: float) -> tuple[str, str]:
    return write_board(folder, cell, limit="1n", mutual_limit="1p")


@pytest.fixture(scope="module")
def stage(tmp_path_factory: pytest.TempPathFactory) -> tuple[str, str]:
    return _stage(tmp_path_factory.mktemp("stage"), COARSE)


@pytest.mark.parametrize("cell", [COARSE, pytest.param(FINE, marks=pytest.mark.slow)])
def test_fast_loops_against_dense(tmp_path: Path, cell: float) -> None:
    """Three loops (100 MHz GMRES, 0 Hz resistive division, 1 MHz with a copper-less
    net): inductance and resistance within 0.1 % of the dense path, the segment terms
    add up to the loop's copper inductance, the largest segment terms agree, the
    near-field pair terms equal the dense pair terms of the same pairs, and the
    GMRES iterations are reported."""
    inputs = load_inputs(*_stage(tmp_path, cell), "fast")
    assert inputs.inductance == "fast" and 1000 <= len(inputs.graph.segments) <= 5000
    fast = extract_fast(inputs)
    dense = extract(inputs)
    rf = loop_results_operator(inputs.graph, inputs.netlist, fast.op, fast.R)
    rd = loop_results(inputs.graph, inputs.netlist, dense.L, dense.R)
    assert [r.frequency for r in rf] == [100e6, 0.0, 1e6]
    for a, b in zip(rf, rd, strict=True):
        assert a.inductance == pytest.approx(b.inductance, rel=1e-3)
        assert a.resistance == pytest.approx(b.resistance, rel=1e-3)
        assert sum(t for _, t in a.contributors) == pytest.approx(a.copper, rel=1e-9)
        top = dict(b.contributors[:5])
        for sid, term in a.contributors[:5]:
            assert term == pytest.approx(top.get(sid, np.nan), rel=1e-2, abs=1e-3 * b.inductance)
        index = {s.id: s.index for s in inputs.graph.segments}
        cur = a.currents
        for sa, sb, term in a.pair_contributors:
            i, j = index[sa], index[sb]
            exact = 2 * dense.L[i, j] * np.real(np.conj(cur[i]) * cur[j])
            assert term == pytest.approx(exact, rel=1e-9)
        assert a.solver is not None and a.solver["inductance"] == "fast"
        assert (a.solver["iterations"] > 0) == (a.frequency > 0)


def _report(stage: tuple[str, str], tmp: Path, how: str) -> dict:
    out = tmp / f"{how}.json"
    res = CliRunner().invoke(main, ["report", *stage, "--format", "json", "--inductance", how,
                                    "-o", str(out), "-q"])
    assert res.exit_code == 0, res.output
    return json.loads(out.read_text())


def test_report_fast_on_the_pour_fixture(tmp_path: Path) -> None:
    """fixtures/routes/pour_plane through the CLI: the fast report's loop within 0.1 % of
    the dense report's, the segments' self inductances equal, the iterations and what is
    left out stated."""
    stage = (str(ROUTES / "pour_plane.cir"), str(ROUTES / "pour_plane.routes.toml"))
    d, f = _report(stage, tmp_path, "dense"), _report(stage, tmp_path, "fast")
    assert "inductance" not in d and f["inductance"]["method"] == "fast"
    whats = {e["what"] for e in f["inductance"]["left_out"]}
    assert {"circuit model", "far couplings", "loop pair terms"} <= whats
    for a, b in zip(f["loops"], d["loops"], strict=True):
        assert a["inductance"] == pytest.approx(b["inductance"], rel=1e-3)
        assert a["resistance"] == pytest.approx(b["resistance"], rel=1e-3)
        assert a["solver"]["iterations"] >= 1 and "solver" not in b
    np.testing.assert_allclose([s["inductance"] for s in f["segments"]],
                               [s["inductance"] for s in d["segments"]], rtol=1e-12)
    # near-field couplings listed are the dense matrix's entries
    dense_k = {(c["a"], c["b"]): c["k"] for c in d["couplings"]}
    listed = [c for c in f["couplings"] if (c["a"], c["b"]) in dense_k]
    assert listed and all(c["k"] == pytest.approx(dense_k[(c["a"], c["b"])], rel=1e-9)
                          for c in listed)


def test_check_exit_codes_agree(stage: tuple[str, str]) -> None:
    """``check`` on both paths: the hot loop over its 1 nH limit and the input loop's
    1 pH mutual limit over: exit 3 on both, the same loops named over."""
    runs = {how: CliRunner().invoke(main, ["check", *stage, "--inductance", how, "-q"])
            for how in ("dense", "fast")}
    assert runs["dense"].exit_code == runs["fast"].exit_code == 3
    for res in runs.values():
        assert "loop 'hot loop' is over its limit" in res.output
        assert "mutual of loops 'input loop' and 'hot loop' is over its limit" in res.output


def test_fast_path_refused_when_memory_is_short(tmp_path: Path,
                                                monkeypatch: pytest.MonkeyPatch) -> None:
    """PARASITE_MEMORY_LIMIT of 1 MB: ``report --inductance fast`` exits 1 naming the
    routes file and what it would need, writes nothing; ``augment --inductance dense``
    says to use the fast path or coarser cells; ``augment`` (auto) is refused by the
    fast path's estimate."""
    monkeypatch.setenv("PARASITE_MEMORY_LIMIT", "1meg")
    cir, routes = str(ROUTES / "pour_plane.cir"), str(ROUTES / "pour_plane.routes.toml")
    out = tmp_path / "r.json"
    res = CliRunner().invoke(main, ["report", cir, routes, "--inductance", "fast",
                                    "--format", "json", "-o", str(out), "-q"])
    assert res.exit_code == 1 and not out.exists()
    assert f"{routes}: error:" in res.output and "near pairs" in res.output
    assert "cell" in res.output and "GiB" in res.output
    res = CliRunner().invoke(main, ["augment", cir, routes, "-o", str(tmp_path / "a.cir"),
                                    "--inductance", "dense", "-q"])
    assert res.exit_code == 1 and "--inductance fast" in res.output
    assert not (tmp_path / "a.cir").exists()
    # auto: past the dense estimate the fast one decides, and refuses too
    res = CliRunner().invoke(main, ["augment", cir, routes, "-o", str(tmp_path / "a.cir"), "-q"])
    assert res.exit_code == 1 and "near pairs" in res.output and "cell" in res.output
    assert not (tmp_path / "a.cir").exists()
