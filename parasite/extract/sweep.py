"""A port's impedance over a list of frequencies, the points scheduled independently.

Each frequency is one :func:`parasite.extract.pour_solve.solve_port` (R + j omega L
current division, unit port current; the dense matrix) or, with the inductance as an
operator (:class:`parasite.extract.operator.FastInductance`, a board too big for the
dense matrix), one :func:`parasite.extract.port_krylov.solve_port_operator` (GMRES;
the operator is sent to each worker once); the points run through
:func:`parasite.schedule.run_map`: in this process by default, or on a Dask cluster
(``scheduler`` address or ``PARASITE_SCHEDULER``), with the same numbers either way.
SI units: Hz, H, ohm.
"""

from __future__ import annotations

from collections.abc import Sequence
from functools import partial
from typing import Any

import numpy as np

from parasite.extract.operator import InductanceOperator
from parasite.extract.port_krylov import solve_port_operator
from parasite.extract.pour_solve import NodeSet, PortSolution, solve_port
from parasite.schedule import run_map

SWEEP_RTOL = 1e-8
"""GMRES's relative residual at each point of a sweep on the operator."""


def _point(frequency: float, *, node_from: np.ndarray, node_to: np.ndarray, n_nodes: int,
           L: np.ndarray, R: np.ndarray, plus: NodeSet, minus: NodeSet,
           shorts: Sequence[NodeSet]) -> PortSolution:
    return solve_port(node_from, node_to, n_nodes, L, R, frequency, plus, minus, shorts)


def _point_operator(frequency: float, *, node_from: np.ndarray, node_to: np.ndarray,
                    n_nodes: int, op: InductanceOperator, R: np.ndarray, plus: NodeSet,
                    minus: NodeSet, shorts: Sequence[NodeSet]) -> PortSolution:
    return solve_port_operator(node_from, node_to, n_nodes, op, R, frequency, plus, minus,
                               shorts, rtol=SWEEP_RTOL).solution


def port_sweep(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int,
               L: np.ndarray | InductanceOperator, R: np.ndarray,
               frequencies: Sequence[float], plus: NodeSet, minus: NodeSet,
               shorts: Sequence[NodeSet] = (), *,
               scheduler: str | Any | None = None) -> list[PortSolution]:
    """:func:`solve_port` at every frequency (Hz), in the order given; in process on a
    thread per core (numpy's dense solves release the interpreter lock). ``L`` an
    operator (anything but an array): :func:`solve_port_operator` at each point, in
    process one point after the other (its far-field sums use every core)."""
    if not isinstance(L, np.ndarray):
        op_task = partial(_point_operator, node_from=np.asarray(node_from),
                          node_to=np.asarray(node_to), n_nodes=int(n_nodes), op=L,
                          R=np.asarray(R, dtype=float), plus=plus, minus=minus,
                          shorts=tuple(shorts))
        return run_map(op_task, [float(f) for f in frequencies], scheduler=scheduler)
    task = partial(_point, node_from=np.asarray(node_from), node_to=np.asarray(node_to),
                   n_nodes=int(n_nodes), L=np.asarray(L, dtype=float),
                   R=np.asarray(R, dtype=float), plus=plus, minus=minus, shorts=tuple(shorts))
    return run_map(task, [float(f) for f in frequencies], scheduler=scheduler, threads=True)
