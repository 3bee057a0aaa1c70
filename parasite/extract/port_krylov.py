"""A port's impedance with the inductance as an operator: Krylov solve of the cycle
equations with a constraint preconditioner.

Same equations as :mod:`parasite.extract.pour_solve` (mesh analysis, Desoer & Kuh
1969): ``B^T Z B m = -B^T Z i_p`` with ``Z = diag(R) + j omega L``, but ``L`` is only
applied (:class:`parasite.extract.operator.InductanceOperator`), never formed. The
system is complex symmetric, not Hermitian: GMRES (Saad & Schultz, SIAM J. Sci.
Stat. Comput. 7(3), 1986; ``scipy.sparse.linalg.gmres``), right-preconditioned by
``(B^T Z_P B)^{-1}`` with ``Z_P = diag(R) + j omega P``, applied without forming
``B^T Z_P B`` (whose fundamental cycles, tree paths, make it nearly dense): the
saddle-point system ``[Z_P A^T; A 0] [x; phi] = [g; 0]`` with ``g`` the residual on the
chords (``B^T g`` is the residual; ``B`` is the identity on the chords) gives ``x = B
m`` in the cycle space, ``m = x[chords]`` (a constraint preconditioner: Keller, Gould
& Wathen, SIAM J. Matrix Anal. Appl. 21(4), 2000, whose preconditioned matrix has
the spectrum of the cycle-space one, whatever the cycle basis).

``P``, :data:`PRECONDITIONERS`:

* ``"diagonal"`` (default): ``P = diag(L)``; the saddle point reduces to the nodal
  equations ``A Z_P^{-1} A^T phi = A Z_P^{-1} g``, a sparse weighted graph Laplacian
  (fill about that of the copper graph);
* ``"near"``: ``P`` the operator's exact near field, the saddle point factored whole
  (sparse LU): fewer iterations, a far larger factor (measured in docs/scale.md).

Stops at ``rtol`` relative residual. SI units: ohm, H, Hz, A.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import LinearOperator, gmres, splu

from parasite.errors import ExtractionError
from parasite.extract.operator import InductanceOperator
from parasite.extract.pour_solve import CycleBasis, NodeSet, PortSolution, port_basis

PRECONDITIONERS = ("diagonal", "near")
"""The preconditioners of :func:`solve_cycles` (module docstring)."""


@dataclass(frozen=True)
class KrylovPortSolution:
    """The port solution and the work it took."""

    solution: PortSolution
    iterations: int  # GMRES inner iterations (matrix-vector products of the cycle system)


def solve_port_operator(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int,
                        op: InductanceOperator, R: np.ndarray, frequency: float,
                        plus: NodeSet, minus: NodeSet, shorts: Sequence[NodeSet] = (), *,
                        rtol: float = 1e-10, maxiter: int = 2000,
                        preconditioner: str = "diagonal") -> KrylovPortSolution:
    """:func:`parasite.extract.pour_solve.solve_port` with ``L`` as an operator: at
    ``frequency`` > 0 Hz by :func:`solve_cycles`; at 0 Hz the division is resistive
    (:func:`resistive_division`, no iterations) and ``L = i^T L i`` (one product)."""
    if not frequency >= 0:
        raise ExtractionError(f"frequency must be >= 0 Hz; got {frequency!r}", key="frequency")
    R = np.asarray(R, dtype=float)
    basis = port_basis(node_from, node_to, n_nodes, plus, minus, shorts)
    if frequency == 0:
        i0 = resistive_division(basis.i_p.reshape(-1), basis.B, R)
        ind, res = float(i0 @ op.matvec(i0)), float(i0 @ (R * i0))
        return KrylovPortSolution(PortSolution(frequency=0.0, impedance=complex(res),
                                               inductance=ind, resistance=res, currents=i0), 0)
    omega = 2.0 * math.pi * frequency
    i, iters = solve_cycles(basis, op, R, omega, rtol=rtol, maxiter=maxiter,
                            preconditioner=preconditioner)
    z = complex(np.sum(np.conj(i) * zmul_full(op, R, omega, i)))
    sol = PortSolution(frequency=float(frequency), impedance=z, inductance=z.imag / omega,
                       resistance=z.real, currents=i)
    return KrylovPortSolution(sol, iters)


def resistive_division(i_p: np.ndarray, B: sp.spmatrix | None, R: np.ndarray) -> np.ndarray:
    """The 0 Hz current division ``i = i_p + B m`` with ``B^T R B m = -B^T R i_p`` (A)."""
    if B is None:
        return i_p
    BtR = (B.T @ sp.diags(R)).tocsr()
    return np.asarray(i_p + B @ splu((BtR @ B).tocsc()).solve(-(BtR @ i_p)))


def constraint_preconditioner(basis: CycleBasis, op: InductanceOperator, R: np.ndarray,
                              omega: float, preconditioner: str = "diagonal"
                              ) -> Callable[[np.ndarray], np.ndarray]:
    """``r -> x`` with ``x = B (B^T Z_P B)^{-1} r`` (N,) or (N, k) for ``r`` (c,) or (c, k),
    the branch currents of the
    preconditioned cycle correction (module docstring); ``x[chords]`` is the mesh
    vector."""
    A = basis.incidence
    nb, nodes = A.shape[1], A.shape[0]
    chords = basis.chords
    if preconditioner == "diagonal":
        y = 1.0 / (R + 1j * omega * np.asarray(op.diagonal(), dtype=float))  # Z_P^{-1}
        lu = splu((A @ sp.diags(y) @ A.T).tocsc())

        def apply(r: np.ndarray) -> np.ndarray:
            g = np.zeros((nb,) + r.shape[1:], dtype=complex)
            g[chords] = r
            w = y.reshape((nb,) + (1,) * (r.ndim - 1))
            yg = w * g
            return np.asarray(yg - w * (A.T @ lu.solve(A @ yg)))
        return apply
    if preconditioner == "near":
        near = getattr(op, "near", None)
        S = sp.diags(op.diagonal()) if near is None else near
        K = sp.bmat([[sp.diags(R) + 1j * omega * S, A.T], [A, None]]).tocsc()
        lu_k = splu(K, permc_spec="COLAMD")

        def apply_k(r: np.ndarray) -> np.ndarray:
            g = np.zeros((nb + nodes,) + r.shape[1:], dtype=complex)
            g[chords] = r
            return np.asarray(lu_k.solve(g)[:nb])
        return apply_k
    raise ExtractionError(f"unknown preconditioner {preconditioner!r}; one of "
                          f"{', '.join(PRECONDITIONERS)}", key="preconditioner")


def solve_cycles(basis: CycleBasis, op: InductanceOperator, R: np.ndarray, omega: float, *,
                 rtol: float = 1e-10, maxiter: int = 2000, restart: int = 400,
                 preconditioner: str = "diagonal",
                 iteration: Callable[[int, float], None] | None = None,
                 atol: float = 0.0) -> tuple[np.ndarray, int]:
    """Branch currents ``i = i_p + B m`` (A) with ``B^T (R + j omega L) i = 0`` solved by
    GMRES(``restart``) with the constraint preconditioner (module docstring), and the
    GMRES iterations it took; ``omega`` > 0 rad/s, ``basis.i_p`` one injection (N,), or
    any currents meeting the current law (a first guess: only the cycle correction is
    solved for). It stops at the residual ``max(rtol |r0|, atol)`` (V; ``r0`` the
    residual of ``i_p``). ``iteration(k, residual)`` after each
    iteration (the relative residual of the preconditioned system). Raises
    :class:`ExtractionError` when the residual is not reached in ``maxiter``."""
    R = np.asarray(R, dtype=float)
    i_p = np.asarray(basis.i_p).reshape(-1)
    if basis.B is None:
        return i_p.astype(complex), 0
    Bt = basis.B.T.tocsr()
    apply = constraint_preconditioner(basis, op, R, omega, preconditioner)

    c = Bt.shape[0]
    A = LinearOperator((c, c), matvec=lambda y: Bt @ zmul_full(op, R, omega, apply(y)),
                       dtype=complex)
    rhs = -(Bt @ zmul_full(op, R, omega, i_p.astype(complex)))
    count = [0]

    def cb(res: float) -> None:
        count[0] += 1
        if iteration is not None:
            iteration(count[0], float(res))

    y, info = gmres(A, rhs, rtol=rtol, atol=atol, restart=min(c, restart),
                    maxiter=max(1, maxiter // max(1, min(c, restart))),
                    callback=cb, callback_type="pr_norm")
    if info != 0:
        raise ExtractionError(f"the iterative port solve did not reach {rtol:g} in "
                              f"{count[0]} iterations", key="ports")
    return i_p + apply(y), count[0]


def solve_cycles_block(basis: CycleBasis, op: InductanceOperator, R: np.ndarray, omega: float,
                       atol: np.ndarray, *, restart: int = 100, maxiter: int = 2000,
                       preconditioner: str = "diagonal",
                       iteration: Callable[[int, float], None] | None = None
                       ) -> tuple[np.ndarray, int]:
    """:func:`solve_cycles` for several injections at once: ``basis.i_p`` (N, k) are
    currents meeting the current law (first guesses), each column's cycle correction is
    solved to its own residual ``atol[j]`` (V) by GMRES in lockstep
    (:func:`lockstep_gmres`: one product of the operator with all the columns per
    iteration, so the multipole sums run once for them all). Returns the currents (N, k)
    and the iterations."""
    R = np.asarray(R, dtype=float)
    i_p = np.asarray(basis.i_p, dtype=complex).reshape(len(R), -1)
    if basis.B is None:
        return i_p, 0
    Bt = basis.B.T.tocsr()
    pre = constraint_preconditioner(basis, op, R, omega, preconditioner)

    def matmat(Y: np.ndarray) -> np.ndarray:
        return np.asarray(Bt @ zmul_full(op, R, omega, pre(Y)))

    rhs = -(Bt @ zmul_full(op, R, omega, i_p))
    Y, iters, ok = lockstep_gmres(matmat, rhs, np.asarray(atol, dtype=float), restart=restart,
                                  maxiter=maxiter, iteration=iteration)
    if not ok:
        raise ExtractionError(f"the iterative port solves did not converge in {iters} "
                              f"iterations", key="ports")
    return i_p + pre(Y), iters


def lockstep_gmres(matmat: Callable[[np.ndarray], np.ndarray], b: np.ndarray, tol: np.ndarray,
                   *, restart: int = 100, maxiter: int = 2000,
                   iteration: Callable[[int, float], None] | None = None
                   ) -> tuple[np.ndarray, int, bool]:
    """GMRES(``restart``) for ``A x_j = b_j``, every column its own Krylov space (Saad &
    Schultz 1986: Arnoldi by modified Gram-Schmidt, complex Givens rotations for the
    least-squares residual), all columns advanced together so that each iteration is one
    ``matmat`` of all of them. Stops when every column's residual is at most ``tol[j]``
    (absolute), or after ``maxiter`` iterations. Returns ``(x, iterations, converged)``;
    ``iteration(k, r)`` after each iteration with the largest ``residual / tol``."""
    n, k = b.shape
    x = np.zeros((n, k), dtype=complex)
    total = 0
    r = b.astype(complex)
    while True:
        beta = np.linalg.norm(r, axis=0)
        if np.all(beta <= tol) or total >= maxiter:
            return x, total, bool(np.all(beta <= tol))
        m = min(restart, maxiter - total)
        V = np.zeros((m + 1, n, k), dtype=complex)
        H = np.zeros((m + 1, m, k), dtype=complex)
        cs = np.zeros((m, k))
        sn = np.zeros((m, k), dtype=complex)
        g = np.zeros((m + 1, k), dtype=complex)
        g[0] = beta
        V[0] = r / np.where(beta > 0, beta, 1.0)
        j = 0
        for j in range(m):
            w = matmat(V[j])
            for i in range(j + 1):
                h = np.einsum("nk,nk->k", V[i].conj(), w)
                H[i, j] = h
                w -= V[i] * h
            hn = np.linalg.norm(w, axis=0)
            H[j + 1, j] = hn
            V[j + 1] = w / np.where(hn > 0, hn, 1.0)
            for i in range(j):  # the rotations so far, on the new column
                a, c = H[i, j].copy(), H[i + 1, j].copy()
                H[i, j] = cs[i] * a + sn[i] * c
                H[i + 1, j] = -sn[i].conj() * a + cs[i] * c
            a, c = H[j, j], H[j + 1, j]
            d = np.sqrt(np.abs(a) ** 2 + np.abs(c) ** 2)
            safe = np.where(d > 0, d, 1.0)
            zero_a = np.abs(a) == 0
            phase = np.where(zero_a, 1.0, a / np.where(zero_a, 1.0, np.abs(a)))
            cs[j] = np.where(d > 0, np.abs(a) / safe, 1.0)
            sn[j] = np.where(d > 0, phase * c.conj() / safe, 0.0)
            H[j, j] = np.where(d > 0, phase * d, a)
            H[j + 1, j] = 0.0
            g[j + 1] = -sn[j].conj() * g[j]
            g[j] = cs[j] * g[j]
            total += 1
            res = np.abs(g[j + 1])
            if iteration is not None:
                iteration(total, float(np.max(res / np.where(tol > 0, tol, 1.0))))
            if np.all(res <= tol):
                break
        size = j + 1
        for col in range(k):
            diag = np.abs(np.diagonal(H[:size, :size, col]))
            cut = int(np.argmin(diag > 0)) if np.any(diag == 0) else size  # a breakdown
            if cut:
                y = np.linalg.solve(np.triu(H[:cut, :cut, col]), g[:cut, col])
                x[:, col] += V[:cut, :, col].T @ y
        r = b - matmat(x)


def zmul_full(op: InductanceOperator, R: np.ndarray, omega: float, v: np.ndarray) -> np.ndarray:
    """(R + j omega L) v (V), ``v`` (N,) or (N, k)."""
    return R.reshape((-1,) + (1,) * (v.ndim - 1)) * v + 1j * omega * op.matvec(v)
