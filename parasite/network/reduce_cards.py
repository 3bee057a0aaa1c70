"""The reduced model of :mod:`parasite.network.reduce` as plain SPICE cards (R, L, K).

The reduced model is ``[v; 0] = (R_r + s L_r) [u; q]``. A change of the internal
coordinates only, ``q = S21 u + S22 q'``, keeps the port currents and port
voltages and is again a congruence:

* ``S21 = -R_qq^{-1} R_qu`` removes the resistive coupling between ports and
  internal states; what is left between the ports is ``Rs = R_uu - R_uq R_qq^{-1}
  R_qu``, the DC port resistance matrix (the expansion at ``s0 = 0`` matches
  it exactly, so it is that of the copper, a resistor network);
* ``S22`` diagonalises ``R_qq`` and ``L_qq`` at once (``eigh(R_qq, L_qq)``,
  scaled to a board-sized inductance), so internal states couple only to ports.

Realisation, as a subcircuit wired in at the port nodes:

* port ``j`` (current from node ``p_j`` to its piece's reference ``r_j``): an
  inductor ``p_j -> y_j`` of ``L'_jj``; the nodes ``y_j`` of one piece meet its
  reference through the resistor network whose port resistance matrix is
  ``Rs``: its conductance matrix ``G = Rs^{-1}`` is a Kron-reduced Laplacian, so
  a resistor ``-1/G_ab`` joins ``y_a`` and ``y_b`` and ``1/sum_b G_ab`` joins ``y_a``
  and ``r``;
* internal state ``m``: an inductor and a resistor in a closed loop, tied to
  one port node at a single point (no current leaves it);
* every pair of these inductors with ``L'_ab != 0``: a coupling statement
  ``k = L'_ab / sqrt(L'_aa L'_bb)`` (``|k| < 1`` as ``L'`` is positive definite).

Only R, L, K and ``.subckt``: ngspice and gnucap both read them. The matrices
exactly as written are checked positive definite (inductance) and positive
semi-definite (the resistor network's Laplacian), and the port impedance of the
written values is compared with the full network's.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg as sla

from parasite.network.couplings import format_k, round_written
from parasite.network.reduce import ReducedModel, port_error, port_impedance

ZERO_K = 1e-9  # |k| below this is not written
ZERO_G = 1e-12  # conductances below this fraction of the largest are left open


def _num(x: float) -> str:
    return f"{x:.10e}"


@dataclass
class Realisation:
    """Element values of the written subcircuit (SI) and its checks."""

    inductances: np.ndarray  # (P+k,) H: port inductors, then internal-loop inductors
    k: np.ndarray  # (P+k, P+k) coupling coefficients as written (0 where none)
    internal_R: np.ndarray  # (k,) ohm
    resistors: list[tuple[int, int, float]]  # (a, b, ohm): y-node indices, -1 = the reference
    pieces: list[np.ndarray]  # port indices per piece of copper
    min_eig_L: float = math.nan  # H, of the inductance matrix as written
    min_eig_G: float = math.nan  # S, of the resistor network's nodal matrix as written
    max_error: float = math.nan  # port impedance of the written values vs the full network

    def matrices(self, n_ports: int) -> tuple[np.ndarray, np.ndarray]:
        """``(R, L)`` of ``[v; 0] = (R + sL)[u; q']`` from the written values."""
        d = np.sqrt(self.inductances)
        L = self.k * d[:, None] * d[None, :]
        np.fill_diagonal(L, self.inductances)
        n = len(self.inductances)
        R = np.zeros((n, n))
        for ports in self.pieces:
            G = _nodal(self.resistors, ports)
            R[np.ix_(ports, ports)] = np.linalg.inv(G)
        R[n_ports:, n_ports:] = np.diag(self.internal_R)
        return R, L


def _nodal(resistors: list[tuple[int, int, float]], ports: np.ndarray) -> np.ndarray:
    """The nodal conductance matrix (reference grounded) of one piece's resistors."""
    where = {int(p): n for n, p in enumerate(ports)}
    G = np.zeros((len(ports), len(ports)))
    for a, b, r in resistors:
        if a not in where:
            continue
        i = where[a]
        G[i, i] += 1.0 / r
        if b >= 0:
            j = where[b]
            G[j, j] += 1.0 / r
            G[i, j] -= 1.0 / r
            G[j, i] -= 1.0 / r
    return G


def realise(model: ReducedModel, full_Z: np.ndarray | None = None) -> Realisation:
    """Element values realising ``model`` (see the module docstring); ``full_Z`` the
    full network's port impedance on ``model.freqs`` for the error of the written values."""
    P = model.n_ports
    R, L = model.R, model.L
    Ruu, Ruq, Rqq = R[:P, :P], R[:P, P:], R[P:, P:]
    k = R.shape[0] - P
    S = np.eye(P + k)
    lam = np.zeros(0)
    if k:
        S[P:, :P] = -np.linalg.solve(Rqq, Ruq.T)
        lam, X = sla.eigh(Rqq, L[P:, P:])
        scale = math.sqrt(float(np.mean(np.diag(L)[:P]))) if P else 1.0
        S[P:, P:] = X * scale
    Lp = S.T @ L @ S
    Lp = 0.5 * (Lp + Lp.T)
    Rs = Ruu - Ruq @ np.linalg.solve(Rqq, Ruq.T) if k else Ruu
    ind = np.diag(Lp).copy()
    d = np.sqrt(ind)
    kk = Lp / (d[:, None] * d[None, :])
    np.fill_diagonal(kk, 0.0)
    kk = np.where(np.abs(kk) < ZERO_K, 0.0, kk)
    kk = round_written(kk) if kk.size else kk
    ind = round_written(ind)
    internal_R = round_written(lam * ind[P:P + len(lam)])
    refs = model.reference_nodes
    pieces = [np.flatnonzero(refs == r) for r in dict.fromkeys(refs.tolist())]
    resistors: list[tuple[int, int, float]] = []
    for ports in pieces:
        G = np.linalg.inv(0.5 * (Rs[np.ix_(ports, ports)] + Rs[np.ix_(ports, ports)].T))
        big = np.abs(G).max()
        for a in range(len(ports)):
            to_ref = G[a].sum()
            if abs(to_ref) > ZERO_G * big:
                resistors.append((int(ports[a]), -1, float(_num(1.0 / to_ref))))
            for b in range(a + 1, len(ports)):
                if abs(G[a, b]) > ZERO_G * big:
                    resistors.append((int(ports[a]), int(ports[b]), float(_num(-1.0 / G[a, b]))))
    out = Realisation(ind, kk, internal_R, resistors, pieces)
    Rw, Lw = out.matrices(P)
    out.min_eig_L = float(np.linalg.eigvalsh(Lw).min()) if Lw.size else math.nan
    mins = [np.linalg.eigvalsh(_nodal(resistors, p)).min() for p in pieces if len(p)]
    out.min_eig_G = float(min(mins)) if mins else math.nan
    if full_Z is not None and P:
        out.max_error = float(port_error(port_impedance(Rw, Lw, P, model.freqs), full_Z).max())
    return out


def subcircuit_cards(model: ReducedModel, real: Realisation, name: str,
                     node_name: dict[int, str], instance: str) -> list[str]:
    """The ``.subckt`` definition and its instance line (``node_name``: graph node
    id -> netlist node name)."""
    P = model.n_ports
    ext = list(dict.fromkeys(model.port_nodes.tolist() + model.reference_nodes.tolist()))
    formal = {n: f"t{i + 1}" for i, n in enumerate(ext)}
    cards = [f".subckt {name} " + " ".join(formal[n] for n in ext)]
    lnames = []
    for j in range(P):
        pn = formal[int(model.port_nodes[j])]
        cards.append(f"* port {j + 1}: {node_name[int(model.port_nodes[j])]} "
                     f"against {node_name[int(model.reference_nodes[j])]}")
        cards.append(f"Lp{j + 1} {pn} y{j + 1} {_num(real.inductances[j])}")
        lnames.append(f"Lp{j + 1}")
    for a, b, r in real.resistors:
        ref = formal[int(model.reference_nodes[a])]
        other = ref if b < 0 else f"y{b + 1}"
        cards.append(f"Rs{a + 1}_{'r' if b < 0 else b + 1} y{a + 1} {other} {_num(r)}")
    tie = formal[ext[0]] if ext else "0"
    for m, rq in enumerate(real.internal_R):
        cards.append(f"Lq{m + 1} {tie} q{m + 1} {_num(real.inductances[P + m])}")
        cards.append(f"Rq{m + 1} q{m + 1} {tie} {_num(rq)}")
        lnames.append(f"Lq{m + 1}")
    n = 0
    for a in range(len(lnames)):
        for b in range(a + 1, len(lnames)):
            if real.k[a, b] != 0.0:
                n += 1
                cards.append(f"K{n} {lnames[a]} {lnames[b]} {format_k(real.k[a, b])}")
    cards.append(f".ends {name}")
    cards.append(f"{instance} " + " ".join(node_name[nd] for nd in ext) + f" {name}")
    return cards
