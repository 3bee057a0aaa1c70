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
    iters = 0
    if B is None:
        i = i_p.astype(complex)
    else:
        B = B.tocsr()
        Bt = B.T.tocsr()
        near = getattr(op, "near", None)
        if near is None:
            near = sp.diags(op.diagonal())
        pre = splu((Bt @ (sp.diags(R) + 1j * omega * near) @ B).tocsc())

        def zmul(v: np.ndarray) -> np.ndarray:
            return R * v + 1j * omega * op.matvec(v)

        c = B.shape[1]
        A = LinearOperator((c, c), matvec=lambda y: Bt @ zmul(B @ pre.solve(y)),
                           dtype=complex)
        rhs = -(Bt @ zmul(i_p.astype(complex)))
        count = [0]

        def cb(_res: float) -> None:
            count[0] += 1

        y, info = gmres(A, rhs, rtol=rtol, atol=0.0, restart=min(c, 200), maxiter=maxiter,
                        callback=cb, callback_type="pr_norm")
        if info != 0:
            raise ExtractionError(f"the iterative port solve did not reach {rtol:g} in "
                                  f"{count[0]} iterations", key="ports")
        iters = count[0]
        i = i_p + B @ pre.solve(y)
    z = complex(np.sum(np.conj(i) * zmul_full(op, R, omega, i)))
    sol = PortSolution(frequency=float(frequency), impedance=z, inductance=z.imag / omega,
                       resistance=z.real, currents=i)
    return KrylovPortSolution(sol, iters)


def zmul_full(op: InductanceOperator, R: np.ndarray, omega: float, v: np.ndarray) -> np.ndarray:
    """(R + j omega L) v (V)."""
    return R * v + 1j * omega * op.matvec(v)
