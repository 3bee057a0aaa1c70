"""Connected pieces of copper: which nodes the segments join (one shared routine for
the graph builder's checks and the network's current-carrying copper)."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components


def component_roots(n_nodes: int, node_from: ArrayLike, node_to: ArrayLike) -> np.ndarray:
    """Per node, the smallest node id of the piece of copper it lies on (edges
    ``node_from[i]``-``node_to[i]``); two nodes are joined exactly when their roots are
    equal. Vectorised: scipy's connected components, then the least id of each."""
    a = np.asarray(node_from, dtype=np.int64)
    b = np.asarray(node_to, dtype=np.int64)
    if n_nodes == 0:
        return np.zeros(0, dtype=np.int64)
    adj = coo_matrix((np.ones(len(a), dtype=np.int8), (a, b)), shape=(n_nodes, n_nodes))
    _, labels = connected_components(adj, directed=False)
    least = np.full(labels.max() + 1, n_nodes, dtype=np.int64)
    np.minimum.at(least, labels, np.arange(n_nodes, dtype=np.int64))
    return least[labels]
