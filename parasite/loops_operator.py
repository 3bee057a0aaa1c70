"""Loop inductance and resistance with the partial inductance as an operator
(the fast path of ``report`` and ``check``: boards too big for the dense matrix).

Same model and same results as :func:`parasite.loops.loop_results` (see its module
docstring), with ``L`` only applied (:class:`parasite.extract.operator.FastInductance`:
exact near field, far field on layer grids by FFT or by multipoles), never
formed:

* the currents of a loop's nets are ``i = i_p + B m`` (particular solution on a
  spanning forest and sparse fundamental cycles,
  :func:`parasite.extract.pour_solve.cycle_basis`);
* at a frequency f > 0 the cycle equations ``B^T (R + j w L) i = 0`` are solved by
  GMRES with the constraint preconditioner of ``diag(R + j w L_ii)`` (the nodal
  equations of the copper graph, a sparse LU;
  :func:`parasite.extract.port_krylov.solve_cycles`), to the relative
  residual :data:`GMRES_RTOL`; the iterations are reported per loop;
* at 0 Hz (the low-frequency limit) the division is resistive (``B^T R B m = -B^T R
  i_p``, sparse LU) and needs no L; then ``L_loop = i^T L i`` with one product;
* segment terms ``Re(conj(i_k) (L i)_k)`` from the same product, self terms from the
  diagonal; pair terms ``2 L_ij Re(conj(i_i) i_j)`` from the exact near field only
  (the pairs within the near radius; far pairs, each weak, are not ranked).

Estimates from closed-form partial inductances: confirm them by measurement.
SI units: H, ohm, Hz, A.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
import scipy.sparse as sp

from geometry.model import CopperGraph
from parasite.extract.operator import InductanceOperator, SubOperator
from parasite.extract.port_krylov import resistive_division, solve_cycles
from parasite.extract.pour_solve import cycle_basis
from parasite.loops import (
    DEFAULT_TOP_PAIRS,
    LoopResult,
    _all_currents,
    path_parts,
    pour_uses,
)
from parasite.network.ports import TerminalLookup, loop_port

GMRES_RTOL = 1e-6
"""Relative residual at which a loop's GMRES solve stops. The loop inductance is
stationary in the currents, so its error is of the order of the residual squared:
measured on the benchmark board (4,674 segments, hot loop at 100 MHz) 2e-10 relative
at 1e-6 against the solve to 1e-8 (4e-6 at 1e-4), far inside the 0.1 % checked."""
PRECONDITIONER = "diagonal"
"""The loop solves' preconditioner (:data:`parasite.extract.port_krylov.PRECONDITIONERS`):
``diag(L)`` in the nodal form. Measured on the benchmark board at 4,674 segments (hot
loop, 100 MHz, to 1e-8): 45 iterations, a factor of 0.22 M entries in 0.0 s; the
whole near field: 19 iterations but 9.4 M entries; the near pairs with |k| >= 0.2
(the previous choice): 199 iterations (a truncated near field is a poor model of
``L``: it drops the positive coupling of the many weak pairs)."""
PAIR_SCOPE = "exact near field only: pairs within the sum of their near radii"


def near_pair_terms(near: sp.spmatrix, currents: np.ndarray, count: int, *,
                    tolerance: float = 1e-12) -> list[tuple[int, int, float]]:
    """:func:`parasite.network.solve.top_pair_terms` over the stored pairs of the sparse
    near field ``near`` (H) only: the ``count`` largest ``2 L_ij Re(conj(i_i) i_j)``."""
    if count <= 0:
        return []
    active = np.abs(currents) > tolerance
    coo = sp.triu(near, k=1).tocoo()
    keep = active[coo.row] & active[coo.col]
    a, b, m = coo.row[keep], coo.col[keep], coo.data[keep]
    if a.size == 0:
        return []
    values = 2.0 * m * np.real(np.conj(currents[a]) * currents[b])
    k = min(count, values.size)
    size = np.abs(values)
    pick = np.argpartition(-size, k - 1)[:k]
    pick = pick[np.lexsort((b[pick], a[pick], -size[pick]))]
    return [(int(a[p]), int(b[p]), float(values[p])) for p in pick]


def loop_results_operator(
    graph: CopperGraph,
    netlist: TerminalLookup,
    op: InductanceOperator,
    R: np.ndarray,
    *,
    frequency: float | None = None,
    resistance_at: Callable[[float], np.ndarray] | None = None,
    top_pairs: int = DEFAULT_TOP_PAIRS,
    rtol: float = GMRES_RTOL,
    preconditioner: str = PRECONDITIONER,
    progress: Callable[[int, int], None] | None = None,
    status: Callable[[str], None] | None = None,
) -> list[LoopResult]:
    """:func:`parasite.loops.loop_results` with ``op`` (N x N, H) applied, never
    formed (module docstring); ``progress(done, total)`` after each loop's solve,
    ``status(text)`` after each GMRES iteration (the loop, the iteration, the residual).
    Each result's ``solver`` says how it was solved (GMRES iterations, tolerance,
    the scope of the pair terms)."""
    R = np.asarray(R, dtype=float)
    if resistance_at is None and len(graph.segments):
        from parasite.extract import resistances

        def resistance_at(f: float) -> np.ndarray:
            return resistances(graph.arrays, graph.routes.copper, f)

    specs = list(graph.routes.loops)
    results = []
    if progress is not None:
        progress(0, len(specs))
    for done, spec in enumerate(specs):
        f = spec.frequency if spec.frequency is not None else frequency
        f = 0.0 if f is None else float(f)
        segments, injection, n_nodes = loop_port(spec, graph, netlist)
        segments = np.asarray(segments, dtype=np.int64)
        R_all = resistance_at(f) if (resistance_at is not None and f > 0) else R
        R_seg = np.asarray(R_all, dtype=float)[segments]
        iters = 0
        if segments.size == 0:
            i = np.zeros(0)
            terms = self_t = i
            inductance = resistance = 0.0
            pair_idx: list[tuple[int, int, float]] = []
        else:
            sub = SubOperator(op, segments)
            basis = cycle_basis(graph.arrays.node_from[segments].astype(np.int64),
                                graph.arrays.node_to[segments].astype(np.int64),
                                n_nodes, injection)
            if f > 0:
                def iteration(k: int, res: float, name: str = spec.name) -> None:
                    if status is not None:
                        status(f"{name}: GMRES iteration {k}, residual {res:.1e} "
                               f"(stops at {rtol:.0e})")

                i, iters = solve_cycles(basis, sub, R_seg, 2.0 * math.pi * f, rtol=rtol,
                                        preconditioner=preconditioner, iteration=iteration)
            else:
                i = resistive_division(basis.i_p.reshape(-1), basis.B, R_seg)
            Li = sub.matvec(i)
            terms = np.real(np.conj(i) * Li)
            mag2 = np.abs(i) ** 2
            self_t = sub.diagonal() * mag2
            inductance, resistance = float(terms.sum()), float(R_seg @ mag2)
            # pair terms over the whole board's near field (no copy of its loop block):
            # only the loop's segments carry current
            near = getattr(op, "near", None)
            pair_idx = ([] if near is None else near_pair_terms(
                near, _all_currents(len(graph.segments), segments, i), top_pairs))
        carrying = np.flatnonzero(np.abs(i) > 1e-12)
        order = carrying[np.lexsort((carrying, -np.abs(terms[carrying])))]
        ids = [graph.segments[int(s)].id for s in segments]
        parts = (path_parts(spec, graph.routes.parts, netlist, graph.routes.path)
                 if graph.routes.parts else ())
        total = inductance + math.fsum(v for _, v in parts)
        within = None if spec.limit is None else bool(total <= spec.limit)
        r_netlist = float(np.sum(R[segments] * np.abs(i) ** 2)) if len(R) else 0.0
        results.append(LoopResult(
            name=spec.name, inductance=total, resistance=resistance, frequency=f,
            limit=spec.limit, within_limit=within,
            contributors=tuple((ids[k], float(terms[k])) for k in order),
            pair_contributors=tuple((graph.segments[a].id, graph.segments[b].id, t)
                                    for a, b, t in pair_idx),
            index=spec.index, line=spec.line,
            self_terms=tuple((ids[k], float(self_t[k])) for k in order),
            pours=pour_uses(graph, segments, np.asarray(i), np.asarray(terms)),
            currents=_all_currents(len(graph.segments), segments, i),
            segments=segments, copper_inductance=inductance, parts=parts,
            netlist_resistance=r_netlist,
            solver=solver_entry(op, f, iters, rtol),
        ))
        if progress is not None:
            progress(done + 1, len(specs))
    return results


def solver_entry(op: Any, frequency: float, iterations: int, rtol: float) -> dict[str, Any]:
    """The JSON report's ``solver`` entry of a loop solved on the fast path."""
    return {
        "inductance": "fast",
        "division": ("GMRES, nodal preconditioner of diag(R + j omega L)" if frequency > 0
                     else "resistive (0 Hz), sparse LU"),
        "iterations": int(iterations),
        "rtol": rtol if frequency > 0 else None,
        "far_field": getattr(op, "far_field", None),
        "far_field_eps": getattr(op, "eps", None),
        "pair_terms": PAIR_SCOPE,
    }
