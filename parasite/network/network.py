"""The circuit that the copper makes, built once from the extraction.

:func:`build_network` takes an :class:`parasite.pipeline.Extraction` and
decides everything the outputs share: the netlist name of every node
(:mod:`parasite.network.names`), the copper that carries current and its
exactly merged series chains (:mod:`parasite.network.branches`), the branch
resistances and inductance matrix, and the couplings to write, with the
threshold chosen per board (:mod:`parasite.network.threshold`) and a written
matrix that stays positive definite (:mod:`parasite.network.couplings`).

The writer, the report, the loops and the probes read the :class:`Network`;
none of them reaches into another. SI units throughout.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
import scipy.sparse as sp

from parasite.naming import NameAllocator
from parasite.network.branches import Branch, branch_matrices, build_branches, conducting_segments
from parasite.network.couplings import (
    CouplingSelection,
    lead_branches,
    select_couplings,
    written_matrix,
)
from parasite.network.names import node_names
from parasite.network.ports import kept_nodes
from parasite.network.threshold import DEFAULT_TOLERANCE, FALLBACK, ThresholdChoice, choose_threshold

if TYPE_CHECKING:
    from geometry.model import CopperGraph
    from parasite.extract.operator import InductanceOperator
    from parasite.pipeline import Extraction, FastExtraction


@dataclass(frozen=True)
class NetworkOptions:
    min_coupling: float | None = None  # None: chosen per board (parasite.network.threshold)
    keep_segments: bool = False  # one branch per segment instead of per series chain
    loop_tolerance: float = DEFAULT_TOLERANCE  # with min_coupling None: largest change of a loop's L


@dataclass(frozen=True)
class Network:
    """Branches, nodes, ports and the couplings to write, of one extraction."""

    extraction: Extraction | FastExtraction
    options: NetworkOptions
    node_names: dict[int, str]  # graph node id -> netlist node name
    reserved_names: frozenset[str]  # netlist node names taken so far (lower-case)
    kept: frozenset[int]  # nodes that stay nodes: pins, anchors, planes, probe contacts and ends
    conducting: np.ndarray  # (N,) bool: segments that can carry a conduction current
    branches: list[Branch] = field(default_factory=list)
    L: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))  # (B, B) H, branch matrix
    R: np.ndarray = field(default_factory=lambda: np.zeros(0))  # (B,) ohm
    chosen: ThresholdChoice | None = None  # the threshold, when known without a search
    search: Callable[[], ThresholdChoice] | None = field(default=None, repr=False,
                                                         compare=False)
    select: Callable[[float], CouplingSelection] | None = field(default=None, repr=False,
                                                                compare=False)
    op: InductanceOperator | None = field(default=None, repr=False, compare=False)
    """The branch inductance as an operator (the fast path: ``L`` is then empty)."""

    @property
    def threshold(self) -> ThresholdChoice | None:
        """How the coupling threshold was chosen (None: no copper). The per-board search
        runs when first asked for: a board whose reduced model is written never needs
        the full model's couplings."""
        if self.chosen is None and self.search is not None:
            object.__setattr__(self, "chosen", self.search())
        return self.chosen

    @property
    def selection(self) -> CouplingSelection | None:
        """The couplings of the full model as written (computed when first asked for)."""
        choice = self.threshold
        if choice is None or self.select is None:
            return None
        return self.select(choice.min_coupling)

    @property
    def min_coupling(self) -> float:
        """The |k| threshold of the written couplings."""
        if self.threshold is not None:
            return float(self.threshold.min_coupling)
        given = self.options.min_coupling
        return FALLBACK if given is None else float(given)

    @property
    def graph(self) -> CopperGraph:
        return self.extraction.inputs.graph

    @property
    def node_from(self) -> np.ndarray:
        """(B,) graph node id where each branch starts."""
        return np.array([b.node_from for b in self.branches], dtype=np.int64)

    @property
    def node_to(self) -> np.ndarray:
        """(B,) graph node id where each branch ends."""
        return np.array([b.node_to for b in self.branches], dtype=np.int64)

    def incidence(self) -> sp.csc_matrix:
        """Node-branch incidence (graph nodes x branches): +1 at a branch's
        ``from`` node, -1 at its ``to`` node."""
        from parasite.network.solve import incidence

        return incidence(self.node_from, self.node_to, len(self.graph.nodes))


def _selector(Lb: np.ndarray, leads: np.ndarray) -> tuple[Any, Any]:
    """Memoised coupling selection per threshold, and the matrix it writes."""
    selections: dict[float, CouplingSelection] = {}
    lams: dict[str, float] = {}  # smallest eigenvalues of the full matrix, found once

    def select(thr: float) -> CouplingSelection:
        if thr not in selections:
            selections[thr] = select_couplings(Lb, thr, leads, lams=lams)
        return selections[thr]

    def written(thr: float) -> np.ndarray:
        sel = select(thr)
        return written_matrix(sel.self_inductance, sel.i, sel.j, sel.k)

    return select, written


def _circuit(extraction: Extraction | FastExtraction, options: NetworkOptions
             ) -> tuple[dict[int, str], NameAllocator, frozenset[int], np.ndarray, list[Branch]]:
    """Node names, the name allocator, the kept nodes, the conducting segments and the
    branches of ``extraction``'s copper (no inductance needed)."""
    graph = extraction.inputs.graph
    allocator = NameAllocator(extraction.inputs.netlist.node_names())
    names = node_names(graph, allocator)
    keep = {p.node for p in graph.pins} | set(graph.anchors.values())
    keep |= {pl.node for pl in graph.planes}
    keep |= kept_nodes(graph)
    mask = conducting_segments(graph, keep)
    branches = build_branches(graph, mask, keep, merge=not options.keep_segments)
    return names, allocator, frozenset(keep), mask, branches


def build_network(extraction: Extraction, options: NetworkOptions | None = None) -> Network:
    """The circuit of ``extraction``'s copper (see the module docstring)."""
    options = options or NetworkOptions()
    inputs = extraction.inputs
    graph = inputs.graph
    given = options.min_coupling
    if not graph.segments:
        allocator = NameAllocator(inputs.netlist.node_names())
        return Network(extraction, options, {}, allocator.taken(), frozenset(),
                       np.zeros(0, dtype=bool))
    names, allocator, kept, mask, branches = _circuit(extraction, options)
    reserved = allocator.taken()
    if not branches:
        return Network(extraction, options, names, reserved, kept, mask, branches,
                       chosen=ThresholdChoice(FALLBACK if given is None else given,
                                              "no copper carries current", {}))
    Lb, Rb = branch_matrices(branches, extraction.L, extraction.R)
    select, written = _selector(Lb, lead_branches(graph, branches))

    def search() -> ThresholdChoice:
        return choose_threshold(graph, inputs.netlist, branches, Lb, Rb, written,
                                tolerance=options.loop_tolerance)

    if given is None:
        return Network(extraction, options, names, reserved, kept, mask, branches, Lb, Rb,
                       search=search, select=select)
    return Network(extraction, options, names, reserved, kept, mask, branches, Lb, Rb,
                   chosen=ThresholdChoice(given, "given (--min-coupling)", {}), select=select)


FAST_RULE = "fast path: the full model is not written (its couplings need the dense matrix)"


def build_fast_network(extraction: FastExtraction,
                       options: NetworkOptions | None = None) -> Network:
    """The circuit of a fast-path extraction: the same nodes and branches as
    :func:`build_network`, the branch inductance as an operator
    (:class:`parasite.network.branch_operator.BranchOperator`, ``Network.op``) and no
    coupling selection (only a reduced model is written from it)."""
    from parasite.network.branch_operator import BranchOperator

    options = options or NetworkOptions()
    names, allocator, kept, mask, branches = _circuit(extraction, options)
    chosen = ThresholdChoice(FALLBACK if options.min_coupling is None else options.min_coupling,
                             FAST_RULE, {})
    if not branches:
        return Network(extraction, options, names, allocator.taken(), kept, mask, branches,
                       chosen=chosen)
    op = BranchOperator(extraction.op, branches)
    S = op.S
    Rb = np.asarray(abs(S) @ extraction.R).ravel()
    return Network(extraction, options, names, allocator.taken(), kept, mask, branches,
                   R=Rb, chosen=chosen, op=op)
