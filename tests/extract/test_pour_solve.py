"""The port solve of a partial-element R-L network against an independent
solve of the same circuit: modified nodal analysis written out in full (branch
equations v_from - v_to = Z i and Kirchhoff's current law, one dense system,
numpy.linalg.solve; C.-W. Ho, A. E. Ruehli & P. A. Brennan, "The modified nodal
approach to network analysis", IEEE Trans. CAS 22(6), 1975). Agreement to
1e-9 relative (rounding only: both are exact linear algebra)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from shapely.geometry import Polygon, box

from geometry.mesh import mesh_polygon
from geometry.model import Copper
from parasite.errors import ExtractionError
from parasite.extract import inductance_matrix, resistances
from parasite.extract.pour_solve import solve_port


def _mna(node_from, node_to, n_nodes, L, R, f, plus, minus):
    """Port impedance by modified nodal analysis; node ``minus`` is the reference."""
    nb = len(node_from)
    Z = np.diag(R).astype(complex) + 2j * math.pi * f * L
    keep = [k for k in range(n_nodes) if k != minus]
    col = {k: i for i, k in enumerate(keep)}
    A = np.zeros((len(keep), nb))
    for b, (u, v) in enumerate(zip(node_from, node_to, strict=True)):
        if u in col:
            A[col[u], b] += 1
        if v in col:
            A[col[v], b] -= 1
    K = np.block([[Z, -A.T.astype(complex)], [A.astype(complex), np.zeros((len(keep),) * 2)]])
    rhs = np.zeros(nb + len(keep), dtype=complex)
    rhs[nb + col[plus]] = 1.0  # 1 A enters at plus
    x = np.linalg.solve(K, rhs)
    return x[nb + col[plus]], x[:nb]


@pytest.mark.parametrize("frequency", [1e3, 10e6, 1e9])
def test_matches_modified_nodal_analysis(frequency: float) -> None:
    """A small pour with a hole (many parallel paths), driven corner to corner."""
    poly = Polygon(box(0, 0, 6e-3, 4e-3).exterior.coords,
                   [box(2e-3, 1.5e-3, 4e-3, 2.5e-3).exterior.coords])
    m = mesh_polygon(poly, z=0.0, thickness=35e-6, cell=1e-3)
    a = m.arrays()
    L = inductance_matrix(a)
    R = resistances(a, Copper())
    plus, minus = m.nearest_node((0, 0)), m.nearest_node((6e-3, 4e-3))
    s = solve_port(a.node_from, a.node_to, m.n_nodes, L, R, frequency, plus, minus)
    z, i = _mna(a.node_from, a.node_to, m.n_nodes, L, R, frequency, plus, minus)
    assert s.impedance == pytest.approx(z, rel=1e-9)
    np.testing.assert_allclose(s.currents, i, rtol=1e-7, atol=1e-9)
    assert s.inductance == pytest.approx(z.imag / (2 * math.pi * frequency), rel=1e-9)


def test_bad_ports() -> None:
    m = mesh_polygon(box(0, 0, 2e-3, 1e-3), z=0.0, thickness=35e-6, cell=1e-3)
    other = mesh_polygon(box(5e-3, 0, 7e-3, 1e-3), z=0.0, thickness=35e-6, cell=1e-3)
    n1 = m.n_nodes
    nf = np.concatenate([m.node_from, other.node_from + n1])
    nt = np.concatenate([m.node_to, other.node_to + n1])
    nb = nf.size
    L, R = np.eye(nb) * 1e-9, np.full(nb, 1e-3)
    with pytest.raises(ExtractionError, match="no copper joins"):
        solve_port(nf, nt, n1 + other.n_nodes, L, R, 1e6, 0, n1)
    with pytest.raises(ExtractionError, match="shorted together"):
        solve_port(nf, nt, n1 + other.n_nodes, L, R, 1e6, [0, 1], [1, 2])
