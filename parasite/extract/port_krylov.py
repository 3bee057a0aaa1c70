"""A port's impedance with the inductance as an operator: Krylov solve of the cycle
equations, preconditioned by the near field.

Same equations as :mod:`parasite.extract.pour_solve` (mesh analysis, Desoer & Kuh
1969): ``B^T Z B m = -B^T Z i_p`` with ``Z = diag(R) + j omega L``, but ``L`` is only
applied (:class:`parasite.extract.operator.InductanceOperator`), never formed. The
system is complex symmetric, not Hermitian: GMRES (Saad & Schultz, SIAM J. Sci.
Stat. Comput. 7(3), 1986; ``scipy.sparse.linalg.gmres``), right-preconditioned by the
sparse LU of ``B^T (R + j omega S) B`` with ``S`` the operator's exact near field
(its diagonal when it has none). Stops at ``rtol`` relative residual (default 1e-10).
SI units: ohm, H, Hz, A.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import LinearOperator, gmres, splu

from parasite.errors import ExtractionError
from parasite.extract.operator import InductanceOperator
from parasite.extract.pour_solve import NodeSet, PortSolution, port_basis


@dataclass(frozen=True)
class KrylovPortSolution:
    """The port solution and the work it took."""

    solution: PortSolution
    iterations: int  # GMRES inner iterations (matrix-vector products of the cycle system)


def solve_port_operator(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int,
                        op: InductanceOperator, R: np.ndarray, frequency: float,
                        plus: NodeSet, minus: NodeSet, shorts: Sequence[NodeSet] = (), *,
                        rtol: float = 1e-10, maxiter: int = 500) -> KrylovPortSolution:
    """:func:`parasite.extract.pour_solve.solve_port` with ``L`` as an operator, for
    ``frequency`` > 0 Hz (the 0 Hz division is resistive and needs no L)."""
    if not frequency > 0:
        raise ExtractionError(f"the iterative solve needs a frequency > 0 Hz; got {frequency!r}",
                              key="frequency")
    R = np.asarray(R, dtype=float)
    omega = 2.0 * math.pi * frequency
    i_p, B = port_basis(node_from, node_to, n_nodes, plus, minus, shorts)
    i, iters = solve_cycles(i_p, B, op, R, omega, rtol=rtol, maxiter=maxiter)
    z = complex(np.sum(np.conj(i) * zmul_full(op, R, omega, i)))
    sol = PortSolution(frequency=float(frequency), impedance=z, inductance=z.imag / omega,
                       resistance=z.real, currents=i)
    return KrylovPortSolution(sol, iters)


def solve_cycles(i_p: np.ndarray, B: sp.spmatrix | None, op: InductanceOperator,
                 R: np.ndarray, omega: float, *, rtol: float = 1e-10,
                 maxiter: int = 500, precondition_k: float = 0.0) -> tuple[np.ndarray, int]:
    """Branch currents ``i = i_p + B m`` (A) with ``B^T (R + j omega L) i = 0`` solved by
    preconditioned GMRES (module docstring), and the GMRES iterations it took;
    ``omega`` > 0 rad/s. ``precondition_k`` > 0: the preconditioner keeps only the near
    pairs coupled at least that much (``op.preconditioner_near``; a sparser LU).
    Raises :class:`ExtractionError` when ``rtol`` is not reached."""
    R = np.asarray(R, dtype=float)
    if B is None:
        return i_p.astype(complex), 0
    B = B.tocsr()
    Bt = B.T.tocsr()
    if precondition_k > 0 and hasattr(op, "preconditioner_near"):
        near = op.preconditioner_near(precondition_k)
    else:
        near = getattr(op, "near", None)
    if near is None:
        near = sp.diags(op.diagonal())
    pre = splu((Bt @ (sp.diags(R) + 1j * omega * near) @ B).tocsc())

    def zmul(v: np.ndarray) -> np.ndarray:
        return R * v + 1j * omega * op.matvec(v)

    c = B.shape[1]
    A = LinearOperator((c, c), matvec=lambda y: Bt @ zmul(B @ pre.solve(y)), dtype=complex)
    rhs = -(Bt @ zmul(i_p.astype(complex)))
    count = [0]

    def cb(_res: float) -> None:
        count[0] += 1

    y, info = gmres(A, rhs, rtol=rtol, atol=0.0, restart=min(c, 200), maxiter=maxiter,
                    callback=cb, callback_type="pr_norm")
    if info != 0:
        raise ExtractionError(f"the iterative port solve did not reach {rtol:g} in "
                              f"{count[0]} iterations", key="ports")
    return i_p + B @ pre.solve(y), count[0]


def zmul_full(op: InductanceOperator, R: np.ndarray, omega: float, v: np.ndarray) -> np.ndarray:
    """(R + j omega L) v (V)."""
    return R * v + 1j * omega * op.matvec(v)
