"""Connected pieces of copper against scipy's own component labelling and a hand
count (common practice: two nodes are joined when a path of edges links them)."""

from __future__ import annotations

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from geometry.components import component_roots


def test_hand_counted_pieces() -> None:
    """Nodes 0-1-2 and 4-5 joined, 3 and 6 alone (drawn by hand): roots 0, 3, 4, 6."""
    roots = component_roots(7, np.array([2, 1, 5]), np.array([1, 0, 4]))
    assert roots.tolist() == [0, 0, 0, 3, 4, 4, 6]


def test_random_graphs_agree_with_scipy_labels() -> None:
    """Equal roots exactly when scipy.sparse.csgraph gives equal labels, and each
    root is the least node id of its piece, on 50 random graphs."""
    rng = np.random.default_rng(3)
    for _ in range(50):
        n = int(rng.integers(1, 60))
        m = int(rng.integers(0, 2 * n))
        a, b = rng.integers(0, n, m), rng.integers(0, n, m)
        roots = component_roots(n, a, b)
        _, lab = connected_components(coo_matrix((np.ones(m), (a, b)), shape=(n, n)),
                                      directed=False)
        assert np.array_equal(roots[:, None] == roots[None, :], lab[:, None] == lab[None, :])
        for r in set(roots.tolist()):
            assert r == np.flatnonzero(roots == r).min()


def test_no_nodes() -> None:
    assert component_roots(0, np.zeros(0), np.zeros(0)).size == 0
