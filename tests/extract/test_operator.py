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
from shapely.geometry import box

from benchmarks.bench_extract import generated_board
from geometry.model import Copper
from parasite.extract import inductance_matrix, resistances
from parasite.extract.operator import (
    DenseInductance,
    FastInductance,
    as_linear_operator,
)
from parasite.extract.port_krylov import solve_port_operator
from parasite.extract.pour_solve import solve_port
from tests.extract.pour_cases import trace_over_plane


@pytest.mark.parametrize("n, plane", [(1000, True), (2500, True), (1500, False)])
def test_fast_matvec_against_dense(n: int, plane: bool) -> None:
    """Invented boards of n segments (benchmarks' generator: polylines on two layers,
    vias, a return plane or none): ||L_fast x - L x|| / ||L x|| < 1e-4 for random x,
    real and complex, one vector and a block of vectors; the diagonal and a block of
    entries equal the dense ones to 1e-12 relative."""
    arrays = generated_board(n, seed=7, plane=plane)
    dense = DenseInductance.from_arrays(arrays)
    fast = FastInductance(arrays)
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
    fast operator (near-field preconditioner) within 0.1 % of the dense direct solve,
    in few iterations; the dense operator through the same Krylov path to 1e-8."""
    sc = trace_over_plane(10e-3, 1e-3, box(-6e-3, -7e-3, 16e-3, 7e-3), 0.8e-3)
    a = sc.arrays
    L = inductance_matrix(a)
    R = resistances(a, Copper())
    ref = solve_port(a.node_from, a.node_to, sc.n_nodes, L, R, frequency, sc.plus, sc.minus)
    fast = solve_port_operator(a.node_from, a.node_to, sc.n_nodes, FastInductance(a), R,
                               frequency, sc.plus, sc.minus)
    dense = solve_port_operator(a.node_from, a.node_to, sc.n_nodes, DenseInductance(L), R,
                                frequency, sc.plus, sc.minus)
    assert fast.solution.inductance == pytest.approx(ref.inductance, rel=1e-3)
    assert fast.solution.resistance == pytest.approx(ref.resistance, rel=1e-3)
    assert dense.solution.inductance == pytest.approx(ref.inductance, rel=1e-8)
    assert 0 < fast.iterations < 60
