"""Reduced model of the copper network with the partial inductance as an operator (the
fast path of ``augment``: boards too big for the dense matrix). SI units: ohm, H, Hz, A.

The model is the one of :mod:`parasite.network.reduce`: branch currents ``i = T u + X q``
(``T`` the ports' currents on a spanning forest, ``X`` real currents around cycles),
``R_r = W^T R W`` and ``L_r = W^T L W`` with ``W = [T, X]``: a congruence projection, so
``R_r`` and ``L_r`` are symmetric positive definite when ``R`` and ``L`` are (PRIMA,
Odabasioglu, Celik & Pileggi 1998; structure kept as in SPRIM, Freund 2004), and the
check on the numbers is made on the small matrices. What changes is how ``X`` is found:
``L`` is only applied (one multipole product per column), so no mesh matrix is formed
and no modal decomposition of the full network is possible. ``X`` is built greedily
from exact solutions of the full network (the reduced-basis method with a residual
estimator: A. T. Patera and G. Rozza, *Reduced Basis Approximation and A Posteriori
Error Estimation for Parametrized Partial Differential Equations*, MIT 2007, ch. 7;
for interconnect, the port responses at chosen frequencies span a rational Krylov
space of order one: E. J. Grimme, PhD thesis, Univ. Illinois 1997):

1. ``X`` starts with the exact 0 Hz division of every port current (the nodal
   equations ``A R^-1 A^T phi = A T``, a sparse factor): the model's DC resistance
   matrix is exact.
2. On the frequency grid of :func:`parasite.network.reduce.frequency_grid` the model's
   currents ``i(s) = W [I; q(s)]`` leave a residual of Kirchhoff's voltage law, ``B^T
   (R + sL) i(s)`` (``B`` the fundamental cycles), cheap to evaluate from the stored
   products ``L W``. Its largest relative value picks the next frequency.
3. There every port's current is solved exactly (GMRES on the cycle equations with
   the constraint preconditioner of :mod:`parasite.extract.port_krylov`, started from
   the model's currents; the port columns are independent items of
   :func:`parasite.schedule.run_map`). The full network's port impedance matrix there,
   ``Z = I^T (R + sL) I`` (stationary in the currents), is compared with the model's
   (:func:`parasite.network.reduce.port_error`): within the tolerance, the model is
   kept as it is; otherwise the real and imaginary parts of the solutions join ``X``
   (the model then matches the full network at that frequency) and step 2 repeats.

The model's errors are stated at every frequency where the full network was solved,
for the model as written (at the frequencies that joined ``X`` they are the solver's
rounding; the last one is the check). Estimates from closed-form partial inductances:
confirm them by measurement.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cached_property, partial
from typing import Any

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from parasite.extract.operator import InductanceOperator
from parasite.extract.port_krylov import constraint_preconditioner, solve_cycles_block
from parasite.extract.pour_solve import CycleBasis, cycle_basis
from parasite.network.reduce import (
    DEFAULT_FMAX,
    DEFAULT_TOLERANCE,
    ReducedModel,
    frequency_grid,
    orth_block,
    port_error,
    port_impedance,
    port_injections,
)
from parasite.schedule import run_map, runs_here

MAX_STEPS = 12
"""Greedy steps at most (each adds up to 2 P columns to ``X``)."""
SOLVE_RTOL = 1e-6
"""Each port's GMRES stops when the cycle residual is this fraction of the residual of
the port's forest currents alone (``B^T (R + sL) T``). The impedance is stationary in
the currents, so its error is of the order of the residual squared. Measured on the
benchmark board (7 ports, benchmarks/bench_board_scale.py's board) at 9,865 segments
with the board path's operator (the layer grids): at 1e-4 64 lockstep iterations,
5.5 s, the full network as solved 3.7e-5 from the dense one at 11.2 kHz, the model
1.31e-3 from the dense network (stated 1.30e-3); at 1e-6 113 iterations, 7.1 s,
1.1e-5, 1.17e-3 (stated 1.16e-3). At 98,547 segments 1e-4 stopped the 15.8 kHz
solves after 2 iterations each, and the model was stated 6.8e-3 from them: at low
frequencies the forest residual is mostly resistive, so its 1e-4 is loose for the
inductive part."""


@dataclass(frozen=True)
class OperatorMesh:
    """The network seen from its ports, with ``L`` an operator (module docstring)."""

    port_nodes: np.ndarray  # (P,) graph node ids (+)
    reference_nodes: np.ndarray  # (P,) graph node ids (-)
    basis: CycleBasis  # i_p = T (B, P): the ports' currents on the forest
    op: InductanceOperator  # (B, B) H
    R: np.ndarray  # (B,) ohm

    @property
    def T(self) -> np.ndarray:
        return np.asarray(self.basis.i_p)

    @cached_property
    def Bt(self) -> sp.csr_matrix | None:
        """``B^T`` (c, B) as CSR, formed once."""
        return None if self.basis.B is None else self.basis.B.T.tocsr()

    @property
    def cycles(self) -> int:
        return 0 if self.basis.B is None else int(self.basis.B.shape[1])


def operator_mesh(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int, ports: list[int],
                  op: InductanceOperator, R: np.ndarray) -> OperatorMesh:
    """:class:`OperatorMesh` of the branch network for the given port nodes
    (:func:`parasite.network.reduce.port_injections`)."""
    nf = np.asarray(node_from, dtype=np.int64)
    nt = np.asarray(node_to, dtype=np.int64)
    plus, minus, inj = port_injections(nf, nt, n_nodes, ports)
    basis = cycle_basis(nf, nt, n_nodes, inj)
    basis = dataclasses.replace(basis, i_p=np.rint(basis.i_p).reshape(len(nf), len(plus)))
    return OperatorMesh(plus, minus, basis, op, np.asarray(R, dtype=float))


@dataclass
class OperatorReduction:
    """The reduced model and how it was found."""

    model: ReducedModel
    steps: list[dict[str, Any]] = field(default_factory=list)  # per greedy step
    grid: np.ndarray = field(default_factory=lambda: np.zeros(0))  # Hz
    estimate: np.ndarray = field(default_factory=lambda: np.zeros(0))  # on grid, final model

    @property
    def iterations(self) -> int:
        return int(sum(sum(s["iterations"]) for s in self.steps))


def dc_division(mesh: OperatorMesh) -> np.ndarray:
    """The exact 0 Hz branch currents (B, P) of every port (A): ``i = R^-1 A^T phi`` with
    ``A R^-1 A^T phi = A T`` (the nodal equations; a sparse weighted Laplacian)."""
    A = mesh.basis.incidence
    g = 1.0 / mesh.R
    lap = (A @ sp.diags(g) @ A.T).tocsc()
    if lap.shape[0] == 0:
        return mesh.T.astype(float)
    phi = splu(lap).solve(np.asarray(A @ mesh.T))
    return np.asarray(g[:, None] * (A.T @ phi.reshape(lap.shape[0], -1)))


def reduced_coefficients(Rr: np.ndarray, Lr: np.ndarray, P: int, f: float) -> np.ndarray:
    """``[I; q]`` ((P + k), P): the model's state for a unit current in each port at ``f``."""
    s = 2j * math.pi * f
    if Rr.shape[0] == P:
        return np.eye(P, dtype=complex)
    Z = Rr + s * Lr
    return np.vstack([np.eye(P), -np.linalg.solve(Z[P:, P:], Z[P:, :P])])


def error_estimate(mesh: OperatorMesh, W: np.ndarray, LW: np.ndarray, Rr: np.ndarray,
                   Lr: np.ndarray, freqs: np.ndarray) -> np.ndarray:
    """Per frequency, the estimated error of the model's port impedance matrix, in the
    measure of :func:`parasite.network.reduce.port_error`. For a Galerkin model the error is
    ``Z_r - Z = r_j^T (B^T Z B)^-1 r_k`` exactly, with ``r = B^T (R + sL) i`` the residual
    of the model's currents ``i`` (the dual-weighted residual: Patera & Rozza 2007, ch. 4);
    the inverse is replaced by the constraint preconditioner of ``diag(R + sL)``
    (:func:`parasite.extract.port_krylov.constraint_preconditioner`, one sparse factor per
    frequency). 0 without cycles."""
    B = mesh.basis.B
    P = mesh.T.shape[1]
    out = np.zeros(len(freqs))
    if B is None or P == 0:
        return out
    Bt = mesh.Bt
    chords = mesh.basis.chords
    RW = mesh.R[:, None] * W
    for n, f in enumerate(freqs):
        s = 2j * math.pi * f
        C = reduced_coefficients(Rr, Lr, P, f)
        r = Bt @ (RW @ C + s * (LW @ C))  # (c, P)
        pre = constraint_preconditioner(mesh.basis, mesh.op, mesh.R, 2 * math.pi * f)
        dZ = r.T @ pre(r)[chords]
        Zr = port_impedance(Rr, Lr, P, np.array([f]))
        out[n] = float(port_error(Zr + dZ[None], Zr)[0])
    return out


PORT_BLOCK = 4
"""Ports solved together (one item of :func:`parasite.schedule.run_map`, one lockstep
GMRES, :func:`parasite.extract.port_krylov.solve_cycles_block`): the blocks are the
same wherever they run, so the numbers are too. Measured at 4,674 segments (the
benchmark board, eps 1e-3): a product of 8 real columns (4 complex) 0.059-0.063 s per
column, of 2 (one complex) 0.077-0.082 s; at 9,865 segments 0.14 against 0.22 s."""


def _port_block(item: tuple[np.ndarray, np.ndarray], *, mesh: OperatorMesh, omega: float,
                rtol: float) -> tuple[np.ndarray, int]:
    """Exact currents (B, k) of a block of ports at ``omega`` from the first guesses
    ``item[0]`` (B, k), each to the residual ``rtol item[1]`` (V)."""
    first, scale = item
    basis = dataclasses.replace(mesh.basis, i_p=first)
    return solve_cycles_block(basis, mesh.op, mesh.R, omega, rtol * scale)


def exact_ports(mesh: OperatorMesh, f: float, first: np.ndarray, LT: np.ndarray, *,
                rtol: float = SOLVE_RTOL, scheduler: str | Any | None = None,
                progress: Callable[[int, int], None] | None = None
                ) -> tuple[np.ndarray, np.ndarray, list[int]]:
    """``(I, Z, iterations)``: every port's exact currents (B, P) at ``f`` > 0 Hz from
    the first guesses ``first`` (B, P) (``LT``: ``L T``, the product of the forest
    currents, V s), the full network's port impedance matrix
    ``Z = I^T (R + sL) I`` (P, P) ohm, and the GMRES iterations per block of ports
    (:data:`PORT_BLOCK`)."""
    s = 2j * math.pi * f
    P = mesh.T.shape[1]
    B = mesh.basis.B
    T = mesh.T
    if B is None:
        I = T.astype(complex)
        iters = []
    else:
        base = np.linalg.norm(mesh.Bt @ (mesh.R[:, None] * T + s * LT), axis=0)
        items = [(first[:, j:j + PORT_BLOCK], base[j:j + PORT_BLOCK])
                 for j in range(0, P, PORT_BLOCK)]
        task = partial(_port_block, mesh=mesh, omega=2 * math.pi * f, rtol=rtol)
        if progress is not None and runs_here(scheduler):
            out = []
            for item in items:
                out += run_map(task, [item], scheduler=scheduler)
                progress(sum(o[0].shape[1] for o in out), P)
        else:
            out = run_map(task, items, scheduler=scheduler)
        I = np.hstack([o[0] for o in out]) if out else np.zeros((len(T), 0), complex)
        iters = [int(o[1]) for o in out]
    Z = I.T @ (mesh.R[:, None] * I + s * mesh.op.matvec(I))
    return I, 0.5 * (Z + Z.T), iters


def significant(block: np.ndarray, scale: np.ndarray, tol: float = 1e-9) -> np.ndarray:
    """The columns of ``block`` larger than ``tol`` times their ``scale`` (a port whose
    piece of copper has no cycle has no correction: its rounding is dropped)."""
    return block[:, np.linalg.norm(block, axis=0) > tol * scale]


def _project(mesh: OperatorMesh, W: np.ndarray, LW: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    Rr = W.T @ (mesh.R[:, None] * W)
    Lr = W.T @ LW
    return 0.5 * (Rr + Rr.T), 0.5 * (Lr + Lr.T)


def reduce_operator(mesh: OperatorMesh, *, f_max: float = DEFAULT_FMAX,
                    tolerance: float = DEFAULT_TOLERANCE, max_steps: int = MAX_STEPS,
                    rtol: float = SOLVE_RTOL, scheduler: str | Any | None = None,
                    status: Callable[[str], None] | None = None) -> OperatorReduction:
    """The reduced model of ``mesh`` (module docstring) within ``tolerance`` of the full
    network at the frequency of largest estimated error, on the grid up to ``f_max``;
    after ``max_steps`` exact solves the model is returned as it is (its errors say how
    far it is). ``status(text)`` before each step and after each port's solve."""
    P = mesh.T.shape[1]
    T = mesh.T
    grid = frequency_grid(f_max)
    c = mesh.cycles
    i_dc = dc_division(mesh) if P else np.zeros((len(T), 0))
    solved: dict[float, np.ndarray] = {0.0: i_dc.T @ (mesh.R[:, None] * i_dc)}
    X = np.zeros((len(T), 0))
    if P and c:
        X = orth_block(X, significant(i_dc - T, np.linalg.norm(i_dc, axis=0)))
    W = np.hstack([T, X])
    LW = np.asarray(mesh.op.matvec(W)) if W.shape[1] else np.zeros_like(W)
    steps: list[dict[str, Any]] = []
    Rr, Lr = _project(mesh, W, LW)
    while P and c:
        est = error_estimate(mesh, W, LW, Rr, Lr, grid)
        free = np.array([f not in solved for f in grid])
        if not free.any() or len(steps) >= max_steps:
            break
        pick = int(np.flatnonzero(free)[np.argmax(est[free])])
        f = float(grid[pick])
        if status is not None:
            status(f"reduced model: step {len(steps) + 1}, {f:.3g} Hz (estimated "
                   f"{est[pick]:.1e}), {X.shape[1]} states")

        def port_done(done: int, total: int, f: float = f) -> None:
            if status is not None:
                status(f"reduced model: {f:.3g} Hz, port {done} of {total} solved")

        first = W @ reduced_coefficients(Rr, Lr, P, f)
        I, Zx, iters = exact_ports(mesh, f, first, LW[:, :P], rtol=rtol, scheduler=scheduler,
                                   progress=port_done if status is not None else None)
        solved[f] = Zx
        err = float(port_error(port_impedance(Rr, Lr, P, np.array([f])), Zx[None])[0])
        steps.append({"frequency": f, "estimate": float(est[pick]), "error": err,
                      "iterations": iters, "states": int(X.shape[1])})
        if err <= tolerance:
            break
        size = np.linalg.norm(I, axis=0)
        new = orth_block(X, significant(np.hstack([I.real - T, I.imag]), np.hstack([size, size])))
        if new.shape[1] == 0:
            break
        X = np.hstack([X, new])
        W = np.hstack([T, X])
        LW = np.hstack([LW, np.asarray(mesh.op.matvec(new))])
        Rr, Lr = _project(mesh, W, LW)
    freqs = np.array(sorted(solved))
    full_Z = np.array([solved[f] for f in freqs], dtype=complex).reshape(len(freqs), P, P)
    errors = port_error(port_impedance(Rr, Lr, P, freqs), full_Z)
    model = ReducedModel(mesh.port_nodes, mesh.reference_nodes, Rr, Lr, int(X.shape[1]), c,
                         f_max, tolerance, freqs, errors, full_Z=full_Z)
    if Rr.size:
        model.min_eig_R = float(np.linalg.eigvalsh(Rr).min())
        model.min_eig_L = float(np.linalg.eigvalsh(Lr).min())
    estimate = error_estimate(mesh, W, LW, Rr, Lr, grid) if (P and c) else np.zeros(len(grid))
    return OperatorReduction(model, steps, grid, estimate)
