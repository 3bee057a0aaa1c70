"""The copper network with every branch replaced by its broadband ladder, as plain R-L
branches, for the reduction (SI units).

A fitted ladder (:class:`parasite.extract.ladder.Ladder`) is ``r0 + s l0`` in series
with stages ``R_k || s L_k``. Here branch ``b`` becomes a main branch from its
``from`` node to a new internal node (resistance ``r0``, inductance ``l0``, and the
mutual inductances of the copper to the other main branches), then per stage a
resistor branch (``R_k``, no inductance) and an inductor branch (``L_k``, no
resistance, uncoupled) in parallel between two internal nodes, the last one being the
branch's ``to`` node. The mutual inductances are the full partial values of the branch
matrix (every pair, not a written threshold), times the common factor of
:func:`parasite.network.ladders.ladder_couplings` that keeps the ``l0`` matrix positive
definite. Every loop of this network contains an inductor (a resistor branch is
bridged by its inductor) and a resistance (a main branch's ``r0`` or a stage's
``R_k``), so its mesh matrices are positive definite, as the reduction needs.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from parasite.network.ladders import BranchLadders, ladder_couplings

if TYPE_CHECKING:
    from parasite.network import Network


@dataclass(frozen=True)
class LadderNetwork:
    """Branches (``node_from``, ``node_to``: graph node ids, internal nodes numbered
    from ``len(graph.nodes)``), ``n_nodes``, the inductance matrix ``L`` (H) and the
    resistances ``R`` (ohm) of the expanded network, the mutual factor applied."""

    node_from: np.ndarray
    node_to: np.ndarray
    n_nodes: int
    L: np.ndarray
    R: np.ndarray
    mutual_scale: float


def ladder_network(network: Network, ladders: BranchLadders) -> LadderNetwork:
    """The network of ``ladders`` (module docstring)."""
    B = len(network.branches)
    l0 = np.array([lad.l0 for lad in ladders.ladders], dtype=float)
    r0 = np.array([lad.r0 for lad in ladders.ladders], dtype=float)
    stages = np.array([lad.r.size for lad in ladders.ladders], dtype=np.int64)
    Lb = 0.5 * (network.L + network.L.T)
    self_l = np.diag(Lb).copy()
    iu, ju = np.triu_indices(B, 1)
    pair = Lb[iu, ju] != 0.0
    i, j = iu[pair], ju[pair]
    k = Lb[i, j] / np.sqrt(self_l[i] * self_l[j])
    k0, scale = ladder_couplings(self_l, l0, i, j, k)
    n = B + 2 * int(stages.sum())
    L = np.zeros((n, n))
    L[np.arange(B), np.arange(B)] = l0
    m = k0 * np.sqrt(l0[i] * l0[j])
    L[i, j] = m
    L[j, i] = m
    R = np.zeros(n)
    R[:B] = r0
    nf = np.empty(n, dtype=np.int64)
    nt = np.empty(n, dtype=np.int64)
    nf[:B] = network.node_from
    nxt = len(network.graph.nodes)
    col = B
    for b, lad in enumerate(ladders.ladders):
        end = int(network.node_to[b])
        if lad.r.size == 0:
            nt[b] = end
            continue
        nt[b] = nxt
        for s in range(lad.r.size):
            a = nxt
            z = end if s == lad.r.size - 1 else nxt + 1
            nxt += 1
            nf[col], nt[col], R[col] = a, z, lad.r[s]  # the stage's resistor
            nf[col + 1], nt[col + 1] = a, z  # and its inductor
            L[col + 1, col + 1] = lad.l[s]
            col += 2
    return LadderNetwork(nf, nt, nxt, L, R, scale)


def ladder_model_size(ladders: BranchLadders) -> int:
    """Inductors and coupling statements of the full broadband model as written (as
    :func:`parasite.network.reduce_choice.full_model_size` counts the plain one): per
    branch ``l0`` and one per stage, plus the coupling statements on the ``l0``."""
    per = sum(1 + lad.r.size for lad in ladders.ladders)
    return per + int(np.count_nonzero(ladders.k))
