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

import numpy as np
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


def test_broadband_ladders_are_reduced_or_written_per_branch(tmp_path: Path) -> None:
    """With --broadband, auto reduces the ladder network on a board with meshed
    returns (the subcircuit has at most half the elements of the ladders, counted in
    the written netlists), and --model full writes every branch's ladder (no
    subcircuit; more inductor cards than branches)."""
    routes, netlist = board(3, ladder=True)
    (tmp_path / "b.cir").write_text(netlist + ".end\n")
    (tmp_path / "b.routes.toml").write_text(routes)
    cir, rt = tmp_path / "b.cir", tmp_path / "b.routes.toml"
    texts, models = {}, {}
    for model in ("auto", "full"):
        out, rep = tmp_path / f"{model}.cir", tmp_path / f"{model}.json"
        res = CliRunner().invoke(main, ["augment", str(cir), str(rt), "-o", str(out),
                                        "--broadband", "--model", model, "--report", str(rep),
                                        "-q"])
        assert res.exit_code == 0, res.output
        texts[model], models[model] = out.read_text(), json.loads(rep.read_text())
    assert models["auto"]["model"]["written"] == "reduced"
    assert ".subckt parasite_copper" in texts["auto"].lower()
    assert ".subckt parasite_copper" not in texts["full"].lower()
    branches = models["full"]["summary"]["branches"]
    assert _count(texts["full"], "L") > branches
    assert 2 * (_count(texts["auto"], "L") + _count(texts["auto"], "K")) <= (
        _count(texts["full"], "L") + _count(texts["full"], "K"))


def _written_inductance(text: str) -> np.ndarray:
    """The inductance matrix (H) that a netlist's L and K cards describe, read back
    from the text (SPICE's K card: k = M / sqrt(L1 L2))."""
    names: dict[str, int] = {}
    values: list[float] = []
    ks: list[tuple[str, str, float]] = []
    for line in text.splitlines():
        f = line.split()
        if f and f[0][0] in "Ll" and len(f) >= 4:
            names[f[0].lower()] = len(values)
            values.append(float(f[3]))
        elif f and f[0][0] in "Kk" and len(f) >= 4:
            ks.append((f[1].lower(), f[2].lower(), float(f[3])))
    d = np.array(values)
    Lw = np.diag(d)
    for a, b, k in ks:
        i, j = names[a], names[b]
        Lw[i, j] = Lw[j, i] = k * np.sqrt(d[i] * d[j])
    return Lw


def test_summary_passivity_is_of_what_is_written(tmp_path: Path) -> None:
    """The summary's smallest eigenvalue is that of the inductance matrix the
    written L and K cards describe, read back from the netlist and checked with
    numpy's symmetric eigensolver (LAPACK): the reduced model's when it is written
    (no eigenvalue of the unwritten full matrix is needed), the full model's
    otherwise."""
    routes, netlist = board(3, ladder=True)
    (tmp_path / "b.cir").write_text(netlist + ".end\n")
    (tmp_path / "b.routes.toml").write_text(routes)
    for model in ("reduced", "full"):
        out, rep = tmp_path / f"{model}.cir", tmp_path / f"{model}.json"
        res = CliRunner().invoke(main, ["augment", str(tmp_path / "b.cir"),
                                        str(tmp_path / "b.routes.toml"), "-o", str(out),
                                        "--model", model, "--report", str(rep), "-q"])
        assert res.exit_code == 0, res.output
        summary = json.loads(rep.read_text())["summary"]
        lam = float(np.linalg.eigvalsh(_written_inductance(out.read_text())).min())
        assert summary["passive"] is True and lam > 0
        assert abs(summary["min_eigenvalue"] - lam) <= 1e-6 * lam, (model, summary, lam)


def test_reduced_model_written_without_the_full_models_threshold_search(tmp_path: Path) -> None:
    """When auto writes the reduced model because it is under half the size of
    the fewest elements any threshold of the search would write, the full model's
    per-board threshold search (loop solves and factorisations per candidate) never
    runs; the bound is a true lower bound of the full model's size once the search
    is run, and the decision is the one the exact size gives."""
    from parasite.augment import augment
    from parasite.network.reduce_choice import AUTO_RATIO, full_model_size
    from parasite.pipeline import extract, inputs_from_text

    routes, netlist = board(3, ladder=True)
    result = augment(extract(inputs_from_text(netlist + ".end\n", routes)))
    network, model = result.network, result.report["model"]
    assert network is not None and model["written"] == "reduced"
    assert network.chosen is None and not model["size"]["full_exact"]
    bound = model["size"]["full"]
    exact = full_model_size(network)  # runs the search now
    assert network.chosen is not None
    assert bound <= exact and model["size"]["reduced"] <= AUTO_RATIO * exact


def test_strong_pairs_counts_like_a_plain_count() -> None:
    """The blocked count of |k| >= k_min against numpy's upper-triangle count on a
    random symmetric positive definite matrix (common practice)."""
    from parasite.network.reduce_choice import strong_pairs

    rng = np.random.default_rng(3)
    a = rng.normal(size=(2600, 40))
    L = a @ a.T + 40 * np.eye(2600)
    d = np.sqrt(np.diag(L))
    k = L / np.outer(d, d)
    iu = np.triu_indices(2600, 1)
    for k_min in (0.05, 0.2, 0.5):
        assert strong_pairs(L, k_min) == int(np.count_nonzero(np.abs(k[iu]) >= k_min))
