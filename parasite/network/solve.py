"""The nodal solve of an R-L branch network driven at a port (pure arrays, SI).

Kirchhoff's current law ``A i = x`` (``A``: sparse node-branch incidence, +1 at
a branch's ``from`` node, -1 at its ``to`` node; ``x`` the port's injection per
1 A) fixes the currents on a spanning tree; the remaining freedom is one
current per independent mesh (fundamental cycles of the tree's chords), fixed
by Kirchhoff's voltage law ``B^T Zb i = 0`` with ``Zb = diag(R) + j omega L``.
The port impedance follows from Tellegen's theorem with a unit port current:
``Z = sum_ij conj(i_i) Zb_ij i_j``, so ``R_port = sum_i R_i |i_i|^2`` and
``L_port = sum_ij L_ij Re(conj(i_i) i_j)``. At ``omega = 0`` the division is the
resistive one (the low-frequency limit; see :mod:`parasite.loops`).

Used by the loop report, the probe pick-up and the threshold choice alike, so
that all three see the same circuit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from geometry.components import component_roots
from parasite.extract.pour_solve import cycle_currents, injection_basis


def incidence(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int) -> sp.csc_matrix:
    """Node-branch incidence: +1 at each branch's ``from`` node, -1 at its ``to``
    node (a branch from a node to itself gives an empty column)."""
    n = len(node_from)
    cols = np.concatenate([np.arange(n), np.arange(n)])
    rows = np.concatenate([node_from, node_to])
    vals = np.concatenate([np.ones(n), -np.ones(n)])
    return sp.csc_matrix((vals, (rows, cols)), shape=(n_nodes, n))


def node_components(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int) -> np.ndarray:
    """Connected-component label of every node (isolated nodes included): the least
    node id of its piece (:func:`geometry.components.component_roots`)."""
    return component_roots(n_nodes, node_from, node_to)


def branch_currents(
    node_from: np.ndarray,
    node_to: np.ndarray,
    n_nodes: int,
    injection: np.ndarray,
    L: np.ndarray,
    R: np.ndarray,
    omega: float,
) -> np.ndarray:
    """Branch currents (A) of an R-L network driven by node injections.

    ``injection[n]`` is the current (A) that enters node ``n`` from outside; it
    must add up to zero on every connected piece. Branch ``k`` runs
    ``node_from[k] -> node_to[k]`` with resistance ``R[k]`` (ohm) and partial
    inductances ``L[k, :]`` (H). At ``omega > 0`` (rad/s) the currents are
    complex phasors; at ``omega == 0`` they are the real low-frequency-limit
    division (resistive). Kirchhoff's laws on a spanning forest and its
    fundamental cycles, the same solve as a pour's port
    (:func:`parasite.extract.pour_solve.injection_basis`, ``cycle_currents``).
    """
    if len(node_from) == 0:
        return np.zeros(0)
    i_p, B = injection_basis(node_from, node_to, n_nodes, injection)
    return cycle_currents(i_p, B, np.asarray(L, dtype=float), np.asarray(R, dtype=float),
                          omega)


@dataclass(frozen=True)
class PortSolution:
    """Port impedance of a network at one frequency, and its terms."""

    currents: np.ndarray  # (n,) branch currents per 1 A port current (complex, or real at DC)
    inductance: float  # H
    resistance: float  # ohm
    segment_terms: np.ndarray  # (n,) H, add up to ``inductance``
    self_terms: np.ndarray  # (n,) H, L_ii |i_i|^2


def solve_port(
    node_from: np.ndarray,
    node_to: np.ndarray,
    n_nodes: int,
    injection: np.ndarray,
    L: np.ndarray,
    R: np.ndarray,
    frequency: float,
) -> PortSolution:
    """Loop inductance (H) and resistance (ohm) seen by a port that drives
    ``injection`` (per 1 A) into the network, at ``frequency`` Hz (0: the
    low-frequency limit). See the module docstring for the equations."""
    L = np.asarray(L, dtype=float)
    R = np.asarray(R, dtype=float)
    omega = 2.0 * math.pi * frequency
    i = branch_currents(node_from, node_to, n_nodes, injection, L, R, omega)
    if len(i) == 0:
        z = np.zeros(0)
        return PortSolution(z, 0.0, 0.0, z, z)
    terms = np.real(np.conj(i) * (L @ i))
    magnitude2 = np.abs(i) ** 2
    return PortSolution(
        currents=i,
        inductance=float(terms.sum()),
        resistance=float(R @ magnitude2),
        segment_terms=terms,
        self_terms=np.diag(L) * magnitude2,
    )


def top_pair_terms(
    currents: np.ndarray, L: np.ndarray, count: int, *, tolerance: float = 1e-12
) -> list[tuple[int, int, float]]:
    """The ``count`` largest mutual terms ``2 L_ij Re(conj(i_i) i_j)`` (H) by
    magnitude, ``i < j``, largest first, as ``(i, j, term)`` with their sign
    (indices into ``currents``): a cancelling (negative) term ranks by its size."""
    if count <= 0 or len(currents) < 2:
        return []
    active = np.flatnonzero(np.abs(currents) > tolerance)
    if len(active) < 2:
        return []
    ia = currents[active]
    P = 2.0 * L[np.ix_(active, active)] * np.real(np.conj(ia)[:, None] * ia[None, :])
    a, b = np.triu_indices(len(active), k=1)
    values = P[a, b]
    k = min(count, len(values))
    size = np.abs(values)
    pick = np.argpartition(-size, k - 1)[:k]
    # Largest magnitude first; ties in index order so that the output is deterministic.
    pick = pick[np.lexsort((b[pick], a[pick], -size[pick]))]
    return [(int(active[a[p]]), int(active[b[p]]), float(values[p])) for p in pick]
