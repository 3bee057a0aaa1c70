"""Series chains of segments merged into branches, and the copper that carries
no current left out.

A node where exactly two segments meet, with no pin, anchor or plane on it,
joins two segments that always carry the same current (Kirchhoff's current
law). Merging such a chain into one branch is exact for the branch currents:
with ``S`` the (branches x segments) matrix of orientation signs (+1 where the
segment points along the branch, -1 against it), the branch inductance matrix
is ``S L S^T`` and the branch resistance is ``S|.| R``.

Copper that cannot carry a conduction current is left out of the circuit, which
is exact for the currents too: segments that are not connected to their net's
anchor (islands; the graph warns about them) and dangling stubs (a chain that
ends at a node with nothing else on it).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from geometry.components import component_roots
from geometry.model import CopperGraph


@dataclass(frozen=True)
class Branch:
    """A chain of segments carrying one current, oriented node_from -> node_to."""

    segments: tuple[int, ...]  # segment indices, in order along the branch
    signs: tuple[int, ...]  # +1: segment points along the branch; -1: against it
    node_from: int
    node_to: int


def conducting_segments(graph: CopperGraph, keep_nodes: Iterable[int]) -> np.ndarray:
    """Boolean mask of the segments that can carry a conduction current: those
    connected to an anchor, less dangling stubs (pruned repeatedly from their
    free end). ``keep_nodes`` (pins, anchors, planes) are never free ends."""
    n_nodes = len(graph.nodes)
    arrays = graph.arrays
    nf = arrays.node_from.astype(int)
    nt = arrays.node_to.astype(int)
    node_root = component_roots(n_nodes, nf, nt)
    anchored = node_root[list(graph.anchors.values())]
    mask = np.isin(node_root[nf], anchored)

    keep = np.zeros(n_nodes, dtype=bool)
    keep[list(keep_nodes)] = True
    while True:
        degree = np.bincount(nf[mask], minlength=n_nodes) + np.bincount(nt[mask], minlength=n_nodes)
        free = (degree == 1) & ~keep
        stub = mask & (free[nf] | free[nt])
        if not stub.any():
            return mask
        mask &= ~stub


def build_branches(
    graph: CopperGraph, mask: np.ndarray, keep_nodes: Iterable[int], merge: bool = True
) -> list[Branch]:
    """Branches of the segments in ``mask``, in order of their first segment.

    With ``merge`` False, every segment is a branch of its own. A chain's
    direction is that of its lowest-index segment.
    """
    arrays = graph.arrays
    nf = arrays.node_from.astype(int).tolist()
    nt = arrays.node_to.astype(int).tolist()
    included = np.flatnonzero(mask).tolist()
    if not merge:
        return [Branch((s,), (1,), nf[s], nt[s]) for s in included]

    at_node: dict[int, list[int]] = {}
    for s in included:
        at_node.setdefault(nf[s], []).append(s)
        at_node.setdefault(nt[s], []).append(s)
    keep = set(keep_nodes)

    def interior(node: int) -> bool:
        return node not in keep and len(at_node[node]) == 2

    used: set[int] = set()
    branches: list[Branch] = []
    for first in included:
        if first in used:
            continue
        used.add(first)
        segs, signs = [first], [1]
        # forward from the end of the chain
        node = nt[first]
        while interior(node):
            nxt = next(s for s in at_node[node] if s != segs[-1])
            if nxt in used:  # a closed ring of copper with no boundary node
                break
            used.add(nxt)
            sign = 1 if nf[nxt] == node else -1
            segs.append(nxt)
            signs.append(sign)
            node = nt[nxt] if sign == 1 else nf[nxt]
        end = node
        # backward from the start of the chain
        node = nf[first]
        while interior(node) and node != end:
            prv = next(s for s in at_node[node] if s != segs[0])
            if prv in used:
                break
            used.add(prv)
            sign = 1 if nt[prv] == node else -1
            segs.insert(0, prv)
            signs.insert(0, sign)
            node = nf[prv] if sign == 1 else nt[prv]
        branches.append(Branch(tuple(segs), tuple(signs), node, end))
    return branches


def incidence_signs(branches: list[Branch], n_segments: int) -> sp.csr_matrix:
    """The (branches x segments) sign matrix ``S`` of the merge."""
    rows = [b for b, br in enumerate(branches) for _ in br.segments]
    cols = [s for br in branches for s in br.segments]
    vals = [float(g) for br in branches for g in br.signs]
    return sp.csr_matrix((vals, (rows, cols)), shape=(len(branches), n_segments))


def branch_matrices(
    branches: list[Branch], L: np.ndarray, R: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Branch inductance matrix ``S L S^T`` (H) and branch resistances (ohm)."""
    S = incidence_signs(branches, L.shape[0])
    SL = np.asarray(S @ L)
    Lb = np.asarray(S @ SL.T).T
    Lb = 0.5 * (Lb + Lb.T)
    Rb = np.asarray(abs(S) @ R).ravel()
    return Lb, Rb
