"""Port impedance and cell currents of a partial-element R-L network with many
parallel paths (meshed pours), solved at one frequency.

Network: N branches (segments, cells) between nodes, branch impedance matrix
``Z = diag(R) + j omega L`` (ohm) with the dense partial inductance matrix
``L`` (H) from :func:`parasite.extract.inductance_matrix`. A port drives 1 A
into its ``plus`` contact and takes it back at its ``minus`` contact; a
contact is a set of nodes shorted together (an edge of copper soldered to a
terminal, a via's pad); further ideal ``shorts`` join node sets.

Equations (mesh analysis; C. A. Desoer and E. S. Kuh, *Basic Circuit Theory*,
1969, ch. 10 and 12): Kirchhoff's current law ``A i = s`` (incidence ``A``,
injection ``s``) is met by a particular solution ``i_p`` carried by a
breadth-first spanning forest; the remaining currents are one per fundamental
cycle (each chord and its tree path, columns of ``B``), fixed by Kirchhoff's
voltage law ``B^T Z (i_p + B m) = 0``. The cycle matrix ``B^T Z B`` is dense
(c x c, c = N - nodes + components); ``B`` is sparse, so forming it costs
nnz(B) x N. The port impedance is ``Z_in = conj(i)^T Z i`` (Tellegen's theorem,
unit port current); ``L_in = Im Z_in / omega``, ``R_in = Re Z_in``.

At ``frequency = 0`` the division is the resistive one (``B^T R B m = -B^T R
i_p``) and ``L_in = i^T L i``: the low-frequency limit of the loop inductance
(the current's first-order change does not contribute, the solution being
stationary).

SI units: ohm, H, Hz, A.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import breadth_first_order, connected_components
from scipy.sparse.linalg import splu

from parasite.errors import ExtractionError

NodeSet = int | Sequence[int] | np.ndarray


@dataclass(frozen=True)
class PortSolution:
    """A port's impedance at one frequency and the branch currents per 1 A."""

    frequency: float  # Hz
    impedance: complex  # ohm (at 0 Hz: the resistance, real)
    inductance: float  # H
    resistance: float  # ohm
    currents: np.ndarray  # (N,) A, complex phasors (real at 0 Hz), + from node_from to node_to


def merge_nodes(n_nodes: int, groups: Sequence[NodeSet]) -> tuple[np.ndarray, int]:
    """Relabel nodes so that each group of nodes becomes one node.
    Returns (new label of every node, number of labels)."""
    rows, cols = [], []
    for g in groups:
        arr = np.atleast_1d(np.asarray(g, dtype=np.int64))
        if arr.size == 0:
            raise ExtractionError("a contact or short has no node", key="ports")
        if np.any((arr < 0) | (arr >= n_nodes)):
            raise ExtractionError(f"node id out of range 0..{n_nodes - 1}: {arr.tolist()}",
                                  key="ports")
        rows.append(np.full(arr.size, arr[0]))
        cols.append(arr)
    if not rows:
        return np.arange(n_nodes), n_nodes
    r, c = np.concatenate(rows), np.concatenate(cols)
    adj = sp.coo_matrix((np.ones(r.size), (r, c)), shape=(n_nodes, n_nodes))
    n_new, labels = connected_components(adj, directed=False)
    return labels.astype(np.int64), int(n_new)


def _forest(u: np.ndarray, v: np.ndarray, n: int) -> np.ndarray:
    """Mask of the branches of a breadth-first spanning forest (one root per component,
    the node of largest degree, so that tree paths stay short)."""
    nb = u.size
    live = np.flatnonzero(u != v)
    adj = sp.coo_matrix((np.ones(live.size), (u[live], v[live])), shape=(n, n)).tocsr()
    adj = (adj + adj.T).tocsr()
    n_comp, labels = connected_components(adj, directed=False)
    degree = np.diff(adj.indptr)
    mask = np.zeros(nb, dtype=bool)
    lo, hi = np.minimum(u, v), np.maximum(u, v)
    key = lo[live] * n + hi[live]
    order = np.argsort(key, kind="stable")
    skey = key[order]
    by_comp = np.argsort(labels, kind="stable")
    starts = np.searchsorted(labels[by_comp], np.arange(n_comp + 1))
    for comp in np.flatnonzero(np.diff(starts) >= 2):  # pieces of one node have no branch
        members = by_comp[starts[comp]:starts[comp + 1]]
        root = int(members[np.argmax(degree[members])])
        nodes, pred = breadth_first_order(adj, root, directed=False, return_predecessors=True)
        child = nodes[1:].astype(np.int64)  # int64: child * n overflows int32 past 46,340 nodes
        parent = pred[child].astype(np.int64)
        k = np.minimum(child, parent) * n + np.maximum(child, parent)
        pos = np.searchsorted(skey, k)  # the first branch of each node pair
        mask[live[order[pos]]] = True
    return mask


def tree_cycles(u: np.ndarray, v: np.ndarray, n: int, tree: np.ndarray,
                chords: np.ndarray) -> sp.csc_matrix:
    """Fundamental cycle matrix B (N, c) by walking the spanning forest ``tree`` (mask of
    branches ``u -> v``): column k is chord k (+1 from its ``u`` to its ``v``) and the
    tree path back from ``v`` to ``u`` (+1 where a branch is run along its direction),
    all chords advanced together one level at a time (no dense solve)."""
    tb = np.flatnonzero(tree)
    adj = sp.coo_matrix((np.concatenate([tb, tb]) + 1.0,
                         (np.concatenate([u[tb], v[tb]]), np.concatenate([v[tb], u[tb]]))),
                        shape=(n, n)).tocsr()
    parent = np.full(n, -1, dtype=np.int64)
    pbranch = np.full(n, -1, dtype=np.int64)
    depth = np.zeros(n, dtype=np.int64)
    labels = connected_components(adj, directed=False)[1]
    sizes = np.bincount(labels)
    _, roots = np.unique(labels, return_index=True)
    for root in roots[sizes[labels[roots]] > 1]:
        order, pred = breadth_first_order(adj, int(root), directed=False,
                                          return_predecessors=True)
        child = order[1:]
        parent[child] = pred[child]
        pbranch[child] = np.rint(np.asarray(adj[pred[child], child]).ravel()).astype(np.int64) - 1
        for x in child:  # breadth-first: the parent's depth is known first
            depth[x] = depth[parent[x]] + 1
    c = chords.size
    rows, cols, vals = [chords], [np.arange(c)], [np.ones(c)]
    a, b = v[chords].copy(), u[chords].copy()  # walk v -> lca (upwards), lca -> u (downwards)
    k = np.arange(c)
    live = a != b
    while np.any(live):
        up_a = live & (depth[a] >= depth[b])
        up_b = live & ~up_a
        for side, ends in ((up_a, a), (up_b, b)):
            idx = np.flatnonzero(side)
            x = ends[idx]
            br = pbranch[x]
            along = (u[br] == x).astype(float) * 2.0 - 1.0  # x -> parent runs along u -> v
            rows.append(br)
            cols.append(k[idx])
            vals.append(along if ends is a else -along)
            ends[idx] = parent[x]
        live = a != b
    return sp.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                         shape=(len(u), c))


@dataclass(frozen=True)
class CycleBasis:
    """Kirchhoff's laws of a network on a spanning forest (module docstring): every
    branch current meeting the current law is ``i_p + B m``."""

    i_p: np.ndarray  # (N,) or (N, k) A, the particular solution(s) on the forest
    B: sp.csc_matrix | None  # (N, c) fundamental cycles; None without cycles
    chords: np.ndarray  # (c,) the branch of each cycle not in the forest (B[chords] = I)
    incidence: sp.csc_matrix  # (nodes - components, N) incidence, one node per piece dropped


def cycle_basis(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int,
                injection: np.ndarray) -> CycleBasis:
    """The particular solution ``i_p`` (N,) of Kirchhoff's current law ``A i = s`` for
    the node injections ``s`` (A entering each node from outside; zero sum on every
    connected piece) on a spanning forest, the fundamental cycle matrix ``B`` (N, c),
    the chords and the reduced incidence ``A`` (module docstring): every branch current
    that meets the law is ``i_p + B m``. ``injection`` (n_nodes, k) gives ``i_p``
    (N, k), one column per injection."""
    nb = len(node_from)
    u = np.asarray(node_from, dtype=np.int64)
    v = np.asarray(node_to, dtype=np.int64)
    tree = _forest(u, v, n_nodes)
    tb = np.flatnonzero(tree)
    chords = np.flatnonzero(~tree)
    A = sp.csc_matrix((np.concatenate([np.ones(nb), -np.ones(nb)]),
                       (np.concatenate([u, v]), np.concatenate([np.arange(nb)] * 2))),
                      shape=(n_nodes, nb))
    # drop one node per component (its equation is the sum of the others)
    comp = connected_components(sp.coo_matrix((np.ones(nb), (u, v)), shape=(n_nodes, n_nodes)),
                                directed=False)[1]
    keep = np.ones(n_nodes, dtype=bool)
    keep[np.unique(comp, return_index=True)[1]] = False
    A = A[np.flatnonzero(keep)].tocsc()
    injection = np.asarray(injection, dtype=float)
    i_p = np.zeros((nb, *injection.shape[1:]))
    if tb.size:
        i_p[tb] = splu(A[:, tb].tocsc()).solve(injection[keep])
    B = tree_cycles(u, v, n_nodes, tree, chords) if chords.size else None
    return CycleBasis(i_p, B, chords, A)


def injection_basis(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int,
                    injection: np.ndarray) -> tuple[np.ndarray, sp.csc_matrix | None]:
    """``(i_p, B)`` of :func:`cycle_basis`: every branch current that meets Kirchhoff's
    current law for ``injection`` is ``i_p + B m`` (B None without cycles)."""
    basis = cycle_basis(node_from, node_to, n_nodes, injection)
    return basis.i_p, basis.B


def port_basis(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int, plus: NodeSet,
               minus: NodeSet, shorts: Sequence[NodeSet] = ()) -> CycleBasis:
    """:func:`cycle_basis` for 1 A from ``plus`` to ``minus`` (node sets, each
    shorted together, as are ``shorts``)."""
    nb = len(node_from)
    plus_a = np.atleast_1d(np.asarray(plus, dtype=np.int64))
    minus_a = np.atleast_1d(np.asarray(minus, dtype=np.int64))
    labels, n = merge_nodes(n_nodes, [plus_a, minus_a, *shorts])
    u = labels[np.asarray(node_from, dtype=np.int64)]
    v = labels[np.asarray(node_to, dtype=np.int64)]
    p, m = int(labels[plus_a[0]]), int(labels[minus_a[0]])
    if p == m:
        raise ExtractionError("the port's two contacts are shorted together", key="ports")
    comp = connected_components(sp.coo_matrix((np.ones(nb), (u, v)), shape=(n, n)),
                                directed=False)[1]
    if comp[p] != comp[m]:
        raise ExtractionError("no copper joins the port's two contacts", key="ports")
    s = np.zeros(n)
    s[p], s[m] = 1.0, -1.0
    return cycle_basis(u, v, n, s)


def cycle_currents(i_p: np.ndarray, B: sp.csc_matrix | None, L: np.ndarray, R: np.ndarray,
                   omega: float) -> np.ndarray:
    """Branch currents ``i_p + B m`` (A) with the mesh currents ``m`` from Kirchhoff's
    voltage law ``B^T Z (i_p + B m) = 0``, ``Z = diag(R) + j omega L`` (real at
    ``omega`` = 0 rad/s: the resistive division). ``L`` (N, N) H, ``R`` (N,) ohm."""
    if B is None:
        return i_p.astype(complex) if omega > 0 else i_p
    BtR = (B.T @ sp.diags(R)).tocsr()
    rhs_r = BtR @ i_p
    if omega == 0.0:
        return np.asarray(i_p + B @ splu((BtR @ B).tocsc()).solve(-rhs_r))
    BtL = np.asarray(B.T @ L)  # (c, N) dense, sparse x dense
    rhs = rhs_r + 1j * omega * (BtL @ i_p)
    mesh = np.asarray((B.T @ BtL.T).T).astype(complex)  # B^T L B, symmetric
    del BtL
    mesh *= 1j * omega
    mesh += (BtR @ B).toarray()
    # numpy's LU: on the project's machine 4-7 times faster than scipy.linalg's
    # LU or its symmetric LDL^T (measured at c = 1500)
    return np.asarray(i_p + B @ np.linalg.solve(mesh, -rhs))


def solve_port(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int, L: np.ndarray,
               R: np.ndarray, frequency: float, plus: NodeSet, minus: NodeSet,
               shorts: Sequence[NodeSet] = ()) -> PortSolution:
    """Drive 1 A from contact ``plus`` to contact ``minus`` through the network (the
    current enters the copper at ``plus``) and return the port impedance and
    every branch current at ``frequency`` Hz (module docstring). ``L`` (N, N) H,
    ``R`` (N,) ohm."""
    if not frequency >= 0:
        raise ExtractionError(f"frequency must be >= 0 Hz; got {frequency!r}", key="frequency")
    L = np.asarray(L, dtype=float)
    R = np.asarray(R, dtype=float)
    nb = len(node_from)
    if L.shape != (nb, nb) or R.shape != (nb,):
        raise ExtractionError(f"L must be ({nb}, {nb}) and R ({nb},); got {L.shape}, {R.shape}",
                              key="segments")
    basis = port_basis(node_from, node_to, n_nodes, plus, minus, shorts)
    omega = 2.0 * math.pi * frequency
    i = cycle_currents(basis.i_p, basis.B, L, R, omega)
    Li = L @ i
    if omega > 0:
        z = complex(np.sum(np.conj(i) * (R * i + 1j * omega * Li)))
        ind, res = z.imag / omega, z.real
    else:
        ind, res = float(i @ Li), float(i @ (R * i))
        z = complex(res)
    return PortSolution(frequency=float(frequency), impedance=z, inductance=float(ind),
                        resistance=float(res), currents=np.asarray(i))


def sheet_current_density(currents: np.ndarray, width: np.ndarray) -> np.ndarray:
    """Current per unit width (A/m) of every cell: its current over its width."""
    return np.asarray(currents) / np.asarray(width, dtype=float)
