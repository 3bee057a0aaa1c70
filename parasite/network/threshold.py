"""Choosing the coupling threshold from the loops it must not disturb.

Dropping a coupling statement changes the circuit. Each weak coupling is
small, but their sum is not: on a generated board of six loops whose returns
are meshed (benchmarks/bench_threshold.py, figures in benchmarks/RESULTS.md),
a fixed |k| threshold of 0.02 moved a loop inductance by 2.5% as ngspice
measured it, and 0.005 by 0.8%. So the default threshold is chosen per board:
the largest candidate for which the inductance of every ``[[loop]]`` of the
routes file, computed from the matrix exactly as it would be written, stays
within ``tolerance`` of the value from the full matrix. The loop values come
from the same nodal analysis as the report's loops
(:func:`parasite.network.solve.solve_port`), applied to the branches (series chains
merged), which is exact for the branch currents. A board without loops gets
``FALLBACK`` and the report says that no loop checked it.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from parasite.network.branches import Branch
from parasite.network.ports import loop_port
from parasite.network.solve import solve_port

CANDIDATES = (0.05, 0.02, 0.01, 0.005, 0.002, 0.001, 0.0005, 0.0)
"""|k| thresholds tried, largest first; 0 writes every non-zero coupling."""

DEFAULT_TOLERANCE = 0.01
"""Largest relative change of any loop's inductance that pruning may cause."""

FALLBACK = 0.01
"""Threshold for a board without loops (no measure of the error is available)."""


@dataclass(frozen=True)
class ThresholdChoice:
    min_coupling: float
    rule: str  # how it was chosen, for the report
    loop_errors: dict[str, float]  # loop name -> relative change of its inductance at the choice


def _loop_ports(graph: Any, netlist: Any, branches: Sequence[Branch]) -> list[Any]:
    """Per loop: (name, frequency, branch indices in its nets, injection, node count)."""
    first_seg = np.array([b.segments[0] for b in branches], dtype=int)
    ports = []
    for spec in graph.routes.loops:
        segments, injection, n_nodes = loop_port(spec, graph, netlist)
        sel = np.flatnonzero(np.isin(first_seg, segments))
        ports.append((spec.name, float(spec.frequency or 0.0), sel, injection, n_nodes))
    return ports


def loop_inductances(ports: list[Any], branches: Sequence[Branch], L: np.ndarray,
                     R: np.ndarray) -> dict[str, float]:
    """Inductance (H) of every loop port on the branch network with matrix ``L``."""
    nf = np.array([b.node_from for b in branches], dtype=np.int64)
    nt = np.array([b.node_to for b in branches], dtype=np.int64)
    out = {}
    for name, f, sel, injection, n_nodes in ports:
        sol = solve_port(nf[sel], nt[sel], n_nodes, injection, L[np.ix_(sel, sel)], R[sel], f)
        out[name] = sol.inductance
    return out


def choose_threshold(graph: Any, netlist: Any, branches: Sequence[Branch], Lb: np.ndarray, Rb: np.ndarray,
                     written: Callable[[float], np.ndarray], *,
                     tolerance: float = DEFAULT_TOLERANCE,
                     candidates: Sequence[float] = CANDIDATES) -> ThresholdChoice:
    """The largest candidate whose written matrix (``written(threshold)``, the
    branch matrix as the netlist would carry it) keeps every loop within
    ``tolerance`` of the full matrix ``Lb``."""
    if not graph.routes.loops or not branches:
        return ThresholdChoice(FALLBACK, f"fixed {FALLBACK:g} (no [[loop]] to check a threshold against)", {})
    ports = _loop_ports(graph, netlist, branches)
    dense = loop_inductances(ports, branches, Lb, Rb)
    for thr in candidates:
        pruned = loop_inductances(ports, branches, written(thr), Rb)
        errors = {name: (abs(pruned[name] / dense[name] - 1.0) if dense[name] else 0.0) for name in dense}
        if max(errors.values(), default=0.0) <= tolerance:
            rule = (f"auto: the largest of {', '.join(f'{c:g}' for c in candidates)} that keeps every loop "
                    f"within {100 * tolerance:g}% of the full matrix")
            return ThresholdChoice(thr, rule, errors)
    # threshold 0 writes every coupling; only rounding to the written digits is left
    return ThresholdChoice(candidates[-1], f"auto: {candidates[-1]:g}, every coupling written", errors)
