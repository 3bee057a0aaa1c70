"""The spanning forest and fundamental cycles of large copper graphs (past 46,340
nodes, where a product of two node numbers overflows 32-bit integers).

Reference: graph theory (a spanning forest of a graph with n nodes and c connected
pieces has n - c branches and no cycle; the cycle space has dimension N - n + c),
with scipy.sparse.csgraph's connected_components as the independent count.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from parasite.extract.pour_solve import _forest, cycle_basis


def _grid(nx: int, ny: int) -> tuple[np.ndarray, np.ndarray, int]:
    """Branches of an nx x ny grid of nodes (a meshed pour's graph), numbered row by row."""
    idx = np.arange(nx * ny).reshape(ny, nx)
    u = np.concatenate([idx[:, :-1].ravel(), idx[:-1, :].ravel()])
    v = np.concatenate([idx[:, 1:].ravel(), idx[1:, :].ravel()])
    return u.astype(np.int64), v.astype(np.int64), nx * ny


def test_forest_of_a_large_grid_spans_it_without_cycles() -> None:
    """Two grids of 240 x 200 nodes side by side (96,000 nodes, two pieces) and an
    isolated node: the forest has n - c branches and each piece stays connected by
    its branches alone (so it has no cycle)."""
    u1, v1, n1 = _grid(240, 200)
    u = np.concatenate([u1, u1 + n1])
    v = np.concatenate([v1, v1 + n1])
    n = 2 * n1 + 1
    tree = _forest(u, v, n)
    c_all = connected_components(sp.coo_matrix((np.ones(u.size), (u, v)), shape=(n, n)),
                                 directed=False)[0]
    assert c_all == 3
    assert int(tree.sum()) == n - c_all
    t = np.flatnonzero(tree)
    c_tree = connected_components(sp.coo_matrix((np.ones(t.size), (u[t], v[t])),
                                                shape=(n, n)), directed=False)[0]
    assert c_tree == c_all  # n - c branches joining n nodes into c pieces: a forest


def test_cycle_basis_of_a_large_grid_meets_kirchhoff() -> None:
    """1 A through a 220 x 220 grid (48,400 nodes) corner to corner: A i_p = s, A B = 0
    and B has N - n + 1 columns, one chord each."""
    u, v, n = _grid(220, 220)
    s = np.zeros(n)
    s[0], s[n - 1] = 1.0, -1.0
    basis = cycle_basis(u, v, n, s)
    assert basis.B is not None
    assert basis.B.shape == (u.size, u.size - n + 1)
    A = sp.csc_matrix((np.concatenate([np.ones(u.size), -np.ones(u.size)]),
                       (np.concatenate([u, v]), np.concatenate([np.arange(u.size)] * 2))),
                      shape=(n, u.size))
    assert np.max(np.abs(A @ basis.i_p - s)) < 1e-9
    assert abs(A @ basis.B).max() == 0
    diff = basis.B.tocsr()[basis.chords] - sp.identity(basis.chords.size, format="csr")
    assert abs(diff).max() == 0  # sparse: never a dense c x c array
