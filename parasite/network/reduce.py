"""Passive reduced-order model of the copper network, seen from its ports (SI).

The copper is an R-L branch network: branch voltages ``v = (R + sL) i`` with
``R`` diagonal (ohm) and ``L`` the full partial-inductance matrix (H), and
Kirchhoff's current law ``A i = P u`` (``A`` the node-branch incidence, ``u``
the currents the circuit drives into the ports). Its ports are the nodes that
the designer's circuit or a probe touches: the pins, the nets' anchors and the
probe leads' ends. On every connected piece of copper the first port is the
reference; every other port ``p`` of that piece carries a port current that
enters at ``p`` and leaves at the reference.

Loop (mesh) form. The branch currents are ``i = T u + C m``: ``T`` (branches x
ports) a particular solution per unit port current on a spanning tree, ``C``
(branches x chords) the fundamental cycles, ``m`` the mesh currents. Kirchhoff's
voltage law around the cycles and Tellegen's theorem for the port voltages
give, with ``W = [T, C]``,

    W^T (R + sL) W [u; m] = [v; 0],

and the port impedance matrix is the Schur complement on ``u``. This is the
same circuit as the modified nodal form of PRIMA, written in loop variables.

Reduction. The mesh currents are projected onto ``m = Q q`` (``Q`` orthonormal,
chords x k) while the port currents are kept: ``W_r = [T, C Q]``, and
``R_r = W_r^T R W_r``, ``L_r = W_r^T L W_r``. This is a congruence projection as
in PRIMA (A. Odabasioglu, M. Celik, L. T. Pileggi, "PRIMA: passive reduced-order
interconnect macromodeling algorithm", IEEE Trans. CAD 17(8):645-654, 1998),
applied block-wise so that the R-L structure survives, as in SPRIM
(R. W. Freund, "SPRIM: structure-preserving reduced-order interconnect
macromodeling", Proc. ICCAD 2004, pp. 80-87): ``R_r`` and ``L_r`` are symmetric
positive definite whenever ``R`` and ``L`` are, so the reduced model is passive
by construction, and the check below confirms it on the numbers.

``Q`` spans block Krylov subspaces of the mesh response (rational Krylov, one
real expansion point ``s0`` at a time: start ``K0^{-1} [R_mu + s0 L_mu, L_mu]``,
operator ``K0^{-1} L_mm``, ``K0 = R_mm + s0 L_mm``; at ``s0 = inf`` the roles of
R and L swap). Blocks are added round-robin over the points until the port
impedance matrix of the reduced model matches the full one on a frequency grid
from DC to ``f_max`` within the tolerance (see :func:`port_error`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import partial
from typing import Any

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp

from parasite.extract.pour_solve import injection_basis
from parasite.network.solve import node_components
from parasite.schedule import run_map

DEFAULT_FMAX = 1e9  # Hz
DEFAULT_TOLERANCE = 2e-3  # complex relative error of each entry of Z (0.2 %, 0.11 degree)
FLOOR = 1e-3  # entries below this fraction of sqrt(|Z_ii Z_jj|) are judged against that


@dataclass(frozen=True)
class MeshForm:
    """The copper network in loop variables (see the module docstring)."""

    port_nodes: np.ndarray  # (P,) graph node id of each port's + node
    reference_nodes: np.ndarray  # (P,) graph node id of each port's - node (its piece's first port)
    T: np.ndarray  # (B, P) branch currents per 1 A in each port
    C: sp.csc_matrix  # (B, c) fundamental cycles
    L: np.ndarray  # (B, B) H
    R: np.ndarray  # (B,) ohm


def port_injections(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int,
                    ports: list[int]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``(plus, minus, injection)`` of the given port nodes (graph node ids, in order;
    duplicates and nodes without copper are ignored): on every connected piece of copper
    the first port is the reference (``minus``) of the others (``plus``); ``injection``
    (n_nodes, P) puts +1 A in at each port and takes it out at its reference."""
    nf = np.asarray(node_from, dtype=np.int64)
    nt = np.asarray(node_to, dtype=np.int64)
    used = np.zeros(n_nodes, dtype=bool)
    used[nf] = True
    used[nt] = True
    labels = node_components(nf, nt, n_nodes)
    ref: dict[int, int] = {}
    plus, minus = [], []
    for p in dict.fromkeys(int(x) for x in ports):
        if not used[p]:
            continue
        lab = int(labels[p])
        if lab not in ref:
            ref[lab] = p
        else:
            plus.append(p)
            minus.append(ref[lab])
    inj = np.zeros((n_nodes, len(plus)))
    inj[plus, np.arange(len(plus))] = 1.0
    inj[minus, np.arange(len(plus))] -= 1.0
    return np.array(plus, dtype=np.int64), np.array(minus, dtype=np.int64), inj


def mesh_form(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int, ports: list[int],
              L: np.ndarray, R: np.ndarray) -> MeshForm:
    """Loop variables of the branch network for the given port nodes
    (:func:`port_injections`)."""
    nf = np.asarray(node_from, dtype=np.int64)
    nt = np.asarray(node_to, dtype=np.int64)
    plus, minus, inj = port_injections(nf, nt, n_nodes, ports)
    T, C = injection_basis(nf, nt, n_nodes, inj)
    T = np.rint(T)  # 0, +1, -1 on the tree paths: exact
    if C is None:
        C = sp.csc_matrix((len(nf), 0))
    return MeshForm(plus, minus, T, C, np.asarray(L, dtype=float), np.asarray(R, dtype=float))


def _project(form: MeshForm, Q: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """``(R_r, L_r)`` of ``W_r = [T, C Q]`` (``Q`` None: the full mesh space)."""
    CQ = form.C.toarray() if Q is None else np.asarray(form.C @ Q)
    W = np.hstack([form.T, CQ])
    return W.T @ (form.R[:, None] * W), W.T @ form.L @ W


def port_impedance(Rr: np.ndarray, Lr: np.ndarray, n_ports: int,
                   freqs: np.ndarray) -> np.ndarray:
    """Port impedance matrices (F, P, P), ohm, of ``[v; 0] = (Rr + sLr) [u; q]``."""
    out = np.empty((len(freqs), n_ports, n_ports), dtype=complex)
    P = n_ports
    for k, f in enumerate(freqs):
        Z = Rr + 2j * math.pi * f * Lr
        if Z.shape[0] > P:
            X = np.linalg.solve(Z[P:, P:], Z[P:, :P])
            out[k] = Z[:P, :P] - Z[:P, P:] @ X
        else:
            out[k] = Z
    return out


def port_error(Zr: np.ndarray, Zf: np.ndarray) -> np.ndarray:
    """Per frequency, the largest complex relative error of an entry of the port
    impedance matrix: ``|Zr_ij - Zf_ij| / max(|Zf_ij|, FLOOR sqrt(|Zf_ii Zf_jj|))``.
    A complex relative error e bounds the magnitude error by e and the phase
    error by asin(e)."""
    d = np.abs(np.diagonal(Zf, axis1=1, axis2=2))
    scale = np.maximum(np.abs(Zf), FLOOR * np.sqrt(d[:, :, None] * d[:, None, :]))
    scale = np.where(scale > 0, scale, 1.0)
    return np.max(np.abs(Zr - Zf) / scale, axis=(1, 2)) if Zf.shape[1] else np.zeros(len(Zf))


def frequency_grid(f_max: float, points: int = 41) -> np.ndarray:
    """DC and log-spaced frequencies from f_max / 1e6 to f_max (Hz)."""
    return np.concatenate([[0.0], np.logspace(math.log10(f_max) - 6, math.log10(f_max), points)])


@dataclass
class ReducedModel:
    """The reduced model: ``[v; 0] = (R + sL) [u; q]`` with ``u`` the port currents."""

    port_nodes: np.ndarray  # (P,) graph node ids (+)
    reference_nodes: np.ndarray  # (P,) graph node ids (-)
    R: np.ndarray  # (P+k, P+k) ohm, symmetric positive definite
    L: np.ndarray  # (P+k, P+k) H, symmetric positive definite
    order: int  # k, the number of internal states kept
    full_order: int  # the number of independent meshes of the full network
    f_max: float
    tolerance: float
    freqs: np.ndarray = field(default_factory=lambda: np.zeros(0))
    errors: np.ndarray = field(default_factory=lambda: np.zeros(0))  # per frequency
    min_eig_R: float = math.nan
    min_eig_L: float = math.nan
    full_Z: np.ndarray | None = field(default=None, repr=False)  # (F, P, P) ohm, the full network's on freqs

    @property
    def n_ports(self) -> int:
        return len(self.port_nodes)

    @property
    def max_error(self) -> float:
        return float(self.errors.max()) if len(self.errors) else 0.0

    @property
    def passive(self) -> bool:
        return self.min_eig_R > 0 and self.min_eig_L > 0


def orth_block(V: np.ndarray, block: np.ndarray, tol: float = 1e-10) -> np.ndarray:
    """Columns of ``block`` orthogonalised against ``V`` and each other (twice,
    classical Gram-Schmidt then QR with column pivoting); near-dependent ones dropped."""
    if block.size == 0:
        return block
    norms = np.linalg.norm(block, axis=0)
    block = block[:, norms > 0] / norms[norms > 0]
    for _ in range(2):
        if V.shape[1]:
            block = block - V @ (V.T @ block)
    if block.shape[1] == 0:
        return block
    q, r, _ = sla.qr(block, mode="economic", pivoting=True)
    d = np.abs(np.diag(r))
    keep = d > tol * max(d.max(), 1.0) if len(d) else d.astype(bool)
    q = q[:, keep]
    if V.shape[1]:
        q = q - V @ (V.T @ q)
        q, _ = np.linalg.qr(q)
    return q


class _KrylovPoint:
    """Block Krylov sequence of the mesh response at one real expansion point."""

    def __init__(self, Rmm: np.ndarray, Lmm: np.ndarray, Rmu: np.ndarray, Lmu: np.ndarray,
                 s0: float) -> None:
        if math.isinf(s0):  # s = 1/tau, tau -> 0: (L + tau R) m = -(L_mu + tau R_mu) u
            K, self.op, start = Lmm, Rmm, np.hstack([Lmu, Rmu])
        else:
            K, self.op, start = Rmm + s0 * Lmm, Lmm, np.hstack([Rmu + s0 * Lmu, Lmu])
        self.lu = sla.cho_factor(K)
        self.block = sla.cho_solve(self.lu, start)

    def next_block(self, V: np.ndarray) -> np.ndarray:
        new = orth_block(V, self.block)
        if new.shape[1]:
            self.block = sla.cho_solve(self.lu, self.op @ new)
        else:
            self.block = np.zeros((V.shape[0], 0))
        return new


def reduce_network(form: MeshForm, *, f_max: float = DEFAULT_FMAX,
                   tolerance: float = DEFAULT_TOLERANCE, max_order: int | None = None,
                   points: tuple[float, ...] | None = None,
                   scheduler: str | Any | None = None) -> ReducedModel:
    """The smallest reduced model (in blocks) whose port impedance matrix is
    within ``tolerance`` of the full network's on :func:`frequency_grid` of
    ``f_max``, checked after every block. Expansion points, visited in turn,
    default to ``s0 = 0, inf, 2 pi f_max, 2 pi f_max / 100`` (rad/s); the first
    block at ``s0 = 0`` makes the DC port resistance exact. The full network's
    impedances run through :func:`full_port_impedance` (``scheduler``)."""
    P = form.T.shape[1]
    c = form.C.shape[1]
    freqs = frequency_grid(f_max)
    Rf, Lf = _project(form, None)
    Zf = _scheduled_impedance(Rf, Lf, P, freqs, scheduler)
    limit = c if max_order is None else min(c, max_order)
    if points is None:
        w = 2 * math.pi * f_max
        points = (0.0, math.inf, w, w / 100.0)
    Q = np.zeros((c, 0))
    if c and P:
        Rmm, Lmm = Rf[P:, P:], Lf[P:, P:]
        Rmu, Lmu = Rf[P:, :P], Lf[P:, :P]
        seqs = [_KrylovPoint(Rmm, Lmm, Rmu, Lmu, s0) for s0 in points]
        idle = 0
        while Q.shape[1] < limit and idle < len(seqs):
            for seq in seqs:  # round-robin over the points, checking after every block
                new = seq.next_block(Q)
                if not new.shape[1]:
                    idle += 1
                    continue
                idle = 0
                Q = np.hstack([Q, new])[:, :limit]
                Rr, Lr = _project(form, Q)
                if (port_error(port_impedance(Rr, Lr, P, freqs), Zf).max() <= tolerance
                        or Q.shape[1] >= limit):
                    idle = len(seqs)
                    break
    Rr, Lr = _project(form, Q)
    err = port_error(port_impedance(Rr, Lr, P, freqs), Zf)
    model = ReducedModel(form.port_nodes, form.reference_nodes, 0.5 * (Rr + Rr.T),
                         0.5 * (Lr + Lr.T), Q.shape[1], c, f_max, tolerance, freqs, err, full_Z=Zf)
    if Rr.size:
        model.min_eig_R = float(np.linalg.eigvalsh(model.R).min())
        model.min_eig_L = float(np.linalg.eigvalsh(model.L).min())
    return model


@dataclass(frozen=True)
class ModalMesh:
    """The mesh block of ``W^T (R + sL) W`` in modal coordinates: with
    ``V^T L_mm V = I`` and ``V^T R_mm V = diag(lam)`` (the generalized symmetric
    eigenproblem ``R_mm v = lam L_mm v``, both matrices positive definite; LAPACK's
    sygvd through :func:`scipy.linalg.eigh`), ``(R_mm + s L_mm)^{-1} =
    V diag(1 / (lam + s)) V^T``, so the port impedance at any frequency is
    ``Z_uu(s) - (A + sB)^T diag(1 / (lam + s)) (A + sB)`` with ``A = V^T R_mu``,
    ``B = V^T L_mu``: one O(n^3) decomposition for the whole frequency grid
    instead of a complex factorisation per frequency (the modal form of an R-L
    network, e.g. Desoer & Kuh, *Basic Circuit Theory*, 1969, ch. 13)."""

    Ruu: np.ndarray  # (P, P) ohm
    Luu: np.ndarray  # (P, P) H
    A: np.ndarray  # (n, P)
    B: np.ndarray  # (n, P)
    lam: np.ndarray  # (n,) rad/s


def modal_mesh(Rf: np.ndarray, Lf: np.ndarray, P: int) -> ModalMesh:
    """:class:`ModalMesh` of the full ``[u; m]`` matrices ``Rf``, ``Lf`` with ``P`` ports."""
    lam, V = sla.eigh(Rf[P:, P:], Lf[P:, P:], check_finite=False)
    return ModalMesh(Rf[:P, :P], Lf[:P, :P], V.T @ Rf[P:, :P], V.T @ Lf[P:, :P], lam)


def _impedance_point(f: float, *, modes: ModalMesh) -> np.ndarray:
    s = 2j * math.pi * f
    Zmu = modes.A + s * modes.B
    return np.asarray(modes.Ruu + s * modes.Luu - Zmu.T @ (Zmu / (modes.lam + s)[:, None]))


def _scheduled_impedance(Rf: np.ndarray, Lf: np.ndarray, P: int, freqs: np.ndarray,
                         scheduler: str | Any | None) -> np.ndarray:
    """Port impedance matrices (F, P, P) of the full ``[u; m]`` matrices: the modal
    decomposition (:class:`ModalMesh`) once, then each frequency a small product
    through :func:`parasite.schedule.run_map` (in process, or on a Dask cluster; one
    BLAS thread per point either way, so the same bytes)."""
    if Rf.shape[0] == P:
        return port_impedance(Rf, Lf, P, freqs)
    modes = modal_mesh(Rf, Lf, P)
    task = partial(_impedance_point, modes=modes)
    out = run_map(task, [float(f) for f in freqs], scheduler=scheduler)
    return np.array(out, dtype=complex).reshape(len(freqs), P, P)


def full_port_impedance(form: MeshForm, freqs: np.ndarray,
                        model: ReducedModel | None = None, *,
                        scheduler: str | Any | None = None) -> np.ndarray:
    """Port impedance matrices (F, P, P) of the unreduced network (ohm); those
    that ``model`` already holds when its frequencies are ``freqs`` (the full
    network's modal decomposition is the costly part of a reduction: done once);
    the others as in :func:`_scheduled_impedance`."""
    if (model is not None and model.full_Z is not None and len(model.freqs) == len(freqs)
            and np.array_equal(model.freqs, freqs)):
        return model.full_Z
    Rf, Lf = _project(form, None)
    return _scheduled_impedance(Rf, Lf, form.T.shape[1], freqs, scheduler)
