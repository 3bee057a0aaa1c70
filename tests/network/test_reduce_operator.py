"""The reduced model built with the inductance as an operator
(parasite.network.reduce_operator: ``augment --inductance fast``) against independent
references.

References: Kirchhoff's laws solved directly (the dense modified nodal analysis of the
unreduced branch network in tests/network/test_reduce.py, numpy.linalg.solve); the
Galerkin error identity of a symmetric projection (the model's error is
``r^T (B^T Z B)^-1 r``, quadratic in the residual: Patera & Rozza 2007, ch. 4), checked
with numpy's direct solve; ngspice's transient of the netlist written with every branch
and coupling (the dense path's full model).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from parasite.cli import EXIT_USAGE, main
from parasite.extract.operator import (
    BOARD_EPS,
    BOARD_FAR_FIELD,
    BOARD_NEAR_SCALE,
    BOARD_SECTION_RATIO,
    BOARD_WIDTH_POINTS,
    DenseInductance,
    FastInductance,
)
from parasite.network.branch_operator import BranchOperator
from parasite.network.reduce_cards import realise
from parasite.network.reduce_choice import port_nodes
from parasite.network.reduce_operator import operator_mesh, reduce_operator
from tests.boards import ROOT
from tests.network.test_reduce import FREQS, _check, _demo, _meshed, _pour, reference_z

FIXTURES = ROOT / "fixtures" / "routes"


def _mesh(net, op=None):
    op = DenseInductance(net.L) if op is None else op
    return operator_mesh(net.node_from, net.node_to, len(net.graph.nodes), port_nodes(net), op,
                         net.R)


def _reduced_z(Rw: np.ndarray, Lw: np.ndarray, P: int, f: float) -> np.ndarray:
    Z = Rw + 2j * math.pi * f * Lw
    return Z[:P, :P] - Z[:P, P:] @ np.linalg.solve(Z[P:, P:], Z[P:, :P]) if len(Z) > P else Z


def _worst(net, model, Rw: np.ndarray, Lw: np.ndarray) -> tuple[float, float]:
    worst = (0.0, 0.0)
    for f in FREQS:
        Zf = reference_z(net, model.port_nodes, model.reference_nodes, f)
        e = _check(_reduced_z(Rw, Lw, model.n_ports, f), Zf)
        worst = (max(worst[0], e[0]), max(worst[1], e[1]))
    return worst


@pytest.mark.parametrize("which", ["demo", "meshed", "pour"])
def test_written_model_matches_kirchhoff_dc_to_1ghz(which: str) -> None:
    """The greedy model as written (rounded element values), the branch inductance
    applied as an operator, against the unreduced network solved by dense MNA: every
    entry of the port impedance matrix within 1 % in magnitude and 1 degree in phase at
    21 frequencies from DC to 1 GHz that are not the code's grid; passive as written; on
    the meshed boards far smaller than the full network."""
    net = {"demo": _demo, "meshed": _meshed, "pour": _pour}[which]()
    found = reduce_operator(_mesh(net))
    m = found.model
    real = realise(m, m.full_Z)
    Rw, Lw = real.matrices(m.n_ports)
    assert m.passive and np.linalg.eigvalsh(Lw).min() > 0 and np.linalg.eigvalsh(Rw).min() > 0
    if which != "demo":
        assert 0 < m.order < m.full_order / 2
    worst = _worst(net, m, Rw, Lw)
    assert worst[0] <= 0.01 and worst[1] <= 1.0, worst
    # the stated errors are the model's against the full network where it was solved
    for f, e, Zf in zip(m.freqs, m.errors, m.full_Z, strict=True):
        ref = reference_z(net, m.port_nodes, m.reference_nodes, f)
        assert np.allclose(Zf, ref, rtol=1e-5, atol=1e-9 * np.abs(ref).max()), f
        assert e <= 2 * m.tolerance


def test_dc_resistance_is_exact_and_the_check_frequency_within_tolerance() -> None:
    """The first states are the exact 0 Hz division: the model's DC port resistance
    matrix equals Kirchhoff's (dense MNA) to rounding. The greedy loop stops when the
    exact solve at the frequency of largest estimated error is within the tolerance:
    the last step's checked error is."""
    net = _pour()
    found = reduce_operator(_mesh(net))
    m = found.model
    Z0 = reference_z(net, m.port_nodes, m.reference_nodes, 0.0)
    assert np.allclose(_reduced_z(m.R, m.L, m.n_ports, 0.0), Z0, rtol=1e-10,
                       atol=1e-12 * np.abs(Z0).max())
    assert found.steps and found.steps[-1]["error"] <= m.tolerance
    assert all(s["error"] > m.tolerance for s in found.steps[:-1])
    assert found.iterations > 0


def test_error_estimate_is_the_galerkin_error_in_size() -> None:
    """The estimate (the dual-weighted residual with the diagonal preconditioner for the
    inverse) against the model's true error (numpy's direct solve of the full network,
    dense MNA): within a factor of 10 either way wherever the error is above 1e-6 (it
    picks where to solve, it is not the stated error)."""
    net = _meshed()
    found = reduce_operator(_mesh(net), tolerance=1e-7, max_steps=1)
    m = found.model
    from parasite.network.reduce import port_error, port_impedance

    checked = 0
    for f, est in zip(found.grid, found.estimate, strict=True):
        Zf = reference_z(net, m.port_nodes, m.reference_nodes, f)
        true = float(port_error(port_impedance(m.R, m.L, m.n_ports, np.array([f])), Zf[None])[0])
        if true > 1e-6:
            checked += 1
            assert true / 10 <= est <= 10 * true, (f, est, true)
    assert checked >= 10


def test_fast_operator_model_matches_kirchhoff() -> None:
    """The model built from the board settings' operator (:class:`FastInductance`, far
    field on the layer grids, through the branches' congruence) against the dense MNA of
    the dense matrix: within 1 % and 1 degree at 21 frequencies (the operator itself is
    within 1e-4 of the dense matrix, tests/extract/test_operator.py)."""
    net = _pour()
    fast = FastInductance(net.graph.arrays, section_ratio=BOARD_SECTION_RATIO,
                          near_scale=BOARD_NEAR_SCALE, eps=BOARD_EPS,
                          width_points=BOARD_WIDTH_POINTS, far_field=BOARD_FAR_FIELD)
    assert fast.far_field == "grid"
    op = BranchOperator(fast, net.branches)
    assert np.allclose(op.diagonal(), np.diag(net.L), rtol=1e-9)
    x = np.random.default_rng(1).standard_normal(op.shape[0])
    assert np.linalg.norm(op.matvec(x) - net.L @ x) <= 1e-3 * np.linalg.norm(net.L @ x)
    m = reduce_operator(_mesh(net, op)).model
    Rw, Lw = realise(m, m.full_Z).matrices(m.n_ports)
    worst = _worst(net, m, Rw, Lw)
    assert worst[0] <= 0.01 and worst[1] <= 1.0, worst


def _augment(tmp_path: Path, name: str, *extra: str, cell: float = 3.0
             ) -> tuple[int, str, Path]:
    """``augment`` of fixtures/routes/pour_plane with its pour meshed at ``cell`` mm."""
    routes = (FIXTURES / "pour_plane.routes.toml").read_text()
    assert "cell = 3.0" in routes
    rt = tmp_path / f"{name}.routes.toml"
    rt.write_text(routes.replace("cell = 3.0", f"cell = {cell}"))
    cir = tmp_path / "pour_plane.cir"
    cir.write_bytes((FIXTURES / "pour_plane.cir").read_bytes())
    out = tmp_path / f"{name}.cir"
    res = CliRunner().invoke(main, ["augment", str(cir), str(rt), "-o", str(out), "-q", *extra])
    return res.exit_code, res.output, out


@pytest.mark.ngspice
def test_fast_augment_simulates_like_the_full_model(tmp_path: Path) -> None:
    """``augment --inductance fast`` (the reduced model from the operator) and
    ``augment --inductance dense --model full`` (every branch and coupling) of
    fixtures/routes/pour_plane (pour at 6 mm cells, so that ngspice's run of the full
    model's ten thousand coupling statements stays short), each run by ngspice: the
    source current's pulse response agrees within 1 % of its peak at every printed
    point."""
    from parasite.spice import run_ngspice

    runs = {}
    for name, extra in {"fast": ("--inductance", "fast"),
                        "full": ("--inductance", "dense", "--model", "full")}.items():
        code, output, out = _augment(tmp_path, name, *extra, cell=6.0)
        assert code == 0, output
        text = out.read_text()
        assert ("reduced model" in text) == (name == "fast")
        sim = run_ngspice(out.read_bytes(), base_dir=tmp_path)
        runs[name] = (np.asarray(sim.vector("time")), np.asarray(sim.vector("i(v1)")).real)
    t_full, i_full = runs["full"]
    t_fast, i_fast = runs["fast"]
    on_full = np.interp(t_fast, t_full, i_full)
    peak = np.abs(i_full).max()
    assert peak > 0.1  # 5 V into 10 ohm
    assert np.abs(i_fast - on_full).max() <= 0.01 * peak


@pytest.mark.parametrize("extra", [("--model", "full"), ("--broadband",)])
def test_fast_augment_refuses_what_needs_the_dense_matrix(tmp_path: Path, extra) -> None:
    """The full model and the per-branch ladders need the dense matrix: with
    ``--inductance fast`` a usage error, exit 2, nothing written."""
    code, output, out = _augment(tmp_path, "x", "--inductance", "fast", *extra)
    assert code == EXIT_USAGE and "--inductance fast" in output
    assert not out.exists()
