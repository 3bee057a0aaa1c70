"""The inductance operator: the fast one (exact near field + fast multipole far field)
against the dense matrix, and a port's loop inductance by the preconditioned Krylov
solve against the dense direct solve.

References: the dense matrix of parasite.extract.inductance_matrix (itself checked
against published formulas in test_extract_matrix.py and its neighbours) and the
direct LU solve of parasite.extract.pour_solve.solve_port (checked against modified
nodal analysis in test_pour_solve.py). Tolerances are those of issue 21's checks:
products within 1e-4 relative norm, loop inductances within 0.1 %.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from shapely.geometry import box

from benchmarks.bench_extract import generated_board
from geometry.model import Copper
from parasite.extract import inductance_matrix, resistances
from parasite.extract.operator import (
    BOARD_EPS,
    DenseInductance,
    FastInductance,
    as_linear_operator,
)
from parasite.extract.port_krylov import solve_port_operator
from parasite.extract.pour_solve import solve_port
from tests.extract.pour_cases import trace_over_plane


@pytest.mark.parametrize("n, plane, eps", [(1000, True, 1e-7), (2500, True, 1e-7),
                                           (1500, False, 1e-7), (1500, False, BOARD_EPS),
                                           (1000, True, BOARD_EPS)])
def test_fast_matvec_against_dense(n: int, plane: bool, eps: float) -> None:
    """Invented boards of n segments (benchmarks' generator: polylines on two layers,
    vias, a return plane or none): ||L_fast x - L x|| / ||L x|| < 1e-4 for random x,
    real and complex, one vector and a block of vectors; the diagonal and a block of
    entries equal the dense ones to 1e-12 relative."""
    arrays = generated_board(n, seed=7, plane=plane)
    dense = DenseInductance.from_arrays(arrays)
    fast = FastInductance(arrays, eps=eps)
    rng = np.random.default_rng(n)
    x = rng.standard_normal((n, 2))
    y, yd = fast.matvec(x), dense.matvec(x)
    assert np.linalg.norm(y - yd) / np.linalg.norm(yd) < 1e-4
    z = x[:, 0] + 1j * x[:, 1]
    assert np.linalg.norm(fast.matvec(z) - dense.matvec(z)) / np.linalg.norm(dense.matvec(z)) \
        < 1e-4
    lin = as_linear_operator(fast)
    assert np.allclose(lin @ x[:, 0], y[:, 0], rtol=0, atol=1e-12 * np.abs(y).max())
    np.testing.assert_allclose(fast.diagonal(), dense.diagonal(), rtol=1e-12)
    rows, cols = np.arange(0, n, 37), np.arange(3, n, 53)
    scale = np.abs(dense.block(rows, cols)).max()
    assert np.max(np.abs(fast.block(rows, cols) - dense.block(rows, cols))) < 1e-12 * scale


@pytest.mark.parametrize("frequency", [1e7])
def test_loop_inductance_by_krylov_against_direct(frequency: float) -> None:
    """A trace and its vias over a meshed pour (invented scene of tests/extract/pour_cases,
    about 1,500 segments): the port's loop inductance and resistance from GMRES on the
    fast operator within 0.1 % of the dense direct solve (numpy's LU), in few iterations,
    with either constraint preconditioner (the diagonal's nodal form and the whole near
    field); the dense operator through the same Krylov path to 1e-8."""
    sc = trace_over_plane(10e-3, 1e-3, box(-6e-3, -7e-3, 16e-3, 7e-3), 0.8e-3)
    a = sc.arrays
    L = inductance_matrix(a)
    R = resistances(a, Copper())
    ref = solve_port(a.node_from, a.node_to, sc.n_nodes, L, R, frequency, sc.plus, sc.minus)
    op = FastInductance(a)
    runs = {pre: solve_port_operator(a.node_from, a.node_to, sc.n_nodes, op, R, frequency,
                                     sc.plus, sc.minus, preconditioner=pre)
            for pre in ("diagonal", "near")}
    dense = solve_port_operator(a.node_from, a.node_to, sc.n_nodes, DenseInductance(L), R,
                                frequency, sc.plus, sc.minus)
    for fast in runs.values():
        assert fast.solution.inductance == pytest.approx(ref.inductance, rel=1e-3)
        assert fast.solution.resistance == pytest.approx(ref.resistance, rel=1e-3)
        assert 0 < fast.iterations < 80
    assert dense.solution.inductance == pytest.approx(ref.inductance, rel=1e-8)
    assert runs["near"].iterations < runs["diagonal"].iterations


class _ExactNear(DenseInductance):
    """The dense matrix whose "near field" is the whole matrix."""

    def __init__(self, L: np.ndarray) -> None:
        super().__init__(L)
        self.near = sp.csr_matrix(L)


def test_constraint_preconditioner_with_the_exact_matrix_converges_at_once() -> None:
    """With ``P = L`` the constraint-preconditioned cycle system is the identity
    (Keller, Gould & Wathen, SIAM J. Matrix Anal. Appl. 21(4), 2000: every eigenvalue
    of the preconditioned matrix is 1 when the preconditioner's block is the matrix's
    own), so GMRES converges in one iteration; the currents equal the direct solve's."""
    sc = trace_over_plane(6e-3, 1e-3, box(-4e-3, -4e-3, 10e-3, 4e-3), 1.0e-3)
    a = sc.arrays
    L = inductance_matrix(a)
    R = resistances(a, Copper())
    ref = solve_port(a.node_from, a.node_to, sc.n_nodes, L, R, 1e8, sc.plus, sc.minus)
    run = solve_port_operator(a.node_from, a.node_to, sc.n_nodes, _ExactNear(L), R, 1e8,
                              sc.plus, sc.minus, preconditioner="near")
    assert run.iterations <= 1
    scale = np.max(np.abs(ref.currents))
    assert np.max(np.abs(run.solution.currents - ref.currents)) < 1e-9 * scale
