"""Full or reduced copper model for the netlist, chosen per board.

The ports of the copper are every node that the designer's circuit or a probe
touches: the placed pins, each net's anchor (the netlist's own node) and each
probe lead's far end (the instrument's terminals). :func:`reduce_for_netlist`
builds the reduced model (:mod:`parasite.network.reduce`) and its realisation
(:mod:`parasite.network.reduce_cards`) from a :class:`parasite.network.Network`;
:func:`choose_model` decides ``auto``: the reduced model when it is accurate
(the written values within the tolerance of the full network up to ``f_max``),
passive as written, and at most half the size (inductors, coupling
statements and resistors, which is what ngspice's factorisation time
follows; the reduced model's couplings form one dense group, so a small
saving is not worth it; see ``benchmarks/bench_reduce.py``). Loops, probes and reports keep using the full
network; only the netlist gets the reduced model.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from parasite.errors import ExtractionError
from parasite.network.couplings import coupling_blocks, near_field_couplings
from parasite.network.ladder_network import ladder_model_size, ladder_network
from parasite.network.ladders import BranchLadders
from parasite.network.ports import probe_nodes
from parasite.network.reduce import (
    DEFAULT_FMAX,
    DEFAULT_TOLERANCE,
    ReducedModel,
    full_port_impedance,
    mesh_form,
    reduce_network,
)
from parasite.network.reduce_cards import Realisation, realise
from parasite.network.reduce_operator import OperatorReduction, operator_mesh, reduce_operator
from parasite.network.threshold import CANDIDATES

if TYPE_CHECKING:
    from parasite.network import Network

MODELS = ("auto", "full", "reduced")
AUTO_RATIO = 0.5  # auto writes the reduced model when it has at most this fraction of the elements


@dataclass
class Reduction:
    model: ReducedModel
    realisation: Realisation
    full_size: int  # inductors + coupling statements of the full model as written
    reduced_size: int  # inductors + coupling statements + resistors of the reduced model
    full_exact: bool = True  # False: full_size is a lower bound (no threshold search run)
    method: str = "block Krylov congruence projection"
    checked: str = ""  # where the error was checked, when not on the whole grid

    @property
    def passive(self) -> bool:
        """Positive definite R and L of the model, and as written."""
        r = self.realisation
        return self.model.passive and r.min_eig_L > 0 and not r.min_eig_G < 0

    @property
    def acceptable(self) -> bool:
        return self.passive and self.realisation.max_error <= 2 * self.model.tolerance


def port_nodes(network: Network) -> list[int]:
    """Graph node ids that the circuit or a probe touches (pins, anchors, lead ends)."""
    graph = network.graph
    out = [p.node for p in graph.pins] + list(graph.anchors.values())
    for pn in probe_nodes(graph):
        out += [pn.tip_end, pn.ground_end]
    return list(dict.fromkeys(out))


def reduce_for_netlist(network: Network, *, f_max: float = DEFAULT_FMAX,
                       tolerance: float = DEFAULT_TOLERANCE,
                       ladders: BranchLadders | None = None) -> Reduction:
    """The reduced model of ``network`` seen from :func:`port_nodes`, and its
    realisation; with ``ladders``, of the broadband network
    (:mod:`parasite.network.ladder_network`)."""
    if ladders is not None:
        lad = ladder_network(network, ladders)
        form = mesh_form(lad.node_from, lad.node_to, lad.n_nodes, port_nodes(network),
                         lad.L, lad.R)
    else:
        form = mesh_form(network.node_from, network.node_to, len(network.graph.nodes),
                         port_nodes(network), network.L, network.R)
    model = reduce_network(form, f_max=f_max, tolerance=tolerance)
    real = realise(model, full_port_impedance(form, model.freqs, model))
    n_res = len(real.resistors) + len(real.internal_R)
    n_k = int((real.k != 0).sum()) // 2
    red = Reduction(model, real, 0, len(real.inductances) + n_k + n_res)
    if ladders is not None:
        red.full_size = ladder_model_size(ladders)
    elif network.chosen is not None:  # the full model's couplings are known: count them
        red.full_size = full_model_size(network)
    else:  # no search yet: the fewest elements any threshold of the search writes
        red.full_size = len(network.branches) + strong_pairs(network.L, CANDIDATES[0])
        red.full_exact = False
    return red


def reduce_fast(network: Network, *, f_max: float = DEFAULT_FMAX,
                tolerance: float = DEFAULT_TOLERANCE, scheduler: Any = None,
                status: Any = None) -> tuple[Reduction, OperatorReduction]:
    """The reduced model of a fast-path network (``network.op``, the branch inductance
    as an operator; :mod:`parasite.network.reduce_operator`) and its realisation. The
    full model's size is the lower bound of :func:`reduce_for_netlist` counted over the
    exact near field (its couplings are not searched on the fast path)."""
    if network.op is None:
        raise ValueError("reduce_fast needs the fast path's network (Network.op)")
    mesh = operator_mesh(network.node_from, network.node_to, len(network.graph.nodes),
                         port_nodes(network), network.op, network.R)
    found = reduce_operator(mesh, f_max=f_max, tolerance=tolerance, scheduler=scheduler,
                            status=status)
    model = found.model
    real = realise(model, model.full_Z)
    n_res = len(real.resistors) + len(real.internal_R)
    n_k = int((real.k != 0).sum()) // 2
    near = network.op.near if hasattr(network.op, "near") else None
    strong = (0 if near is None else
              len(near_field_couplings(near, network.op.diagonal(), CANDIDATES[0])[0]))
    red = Reduction(model, real, len(network.branches) + strong,
                    len(real.inductances) + n_k + n_res, full_exact=False,
                    method="congruence projection on exact port solutions, inductance as an "
                           "operator",
                    checked=(f"at the {len(model.freqs)} frequencies where the full network was "
                             f"solved; estimated {float(found.estimate.max()):.2e} at most on "
                             f"the grid"))
    return red, found


def full_model_size(network: Network) -> int:
    """Inductors and coupling statements of the full model as written (runs the
    network's threshold search if it has not run)."""
    sel = network.selection
    return len(network.branches) + (int(sel.kept) if sel is not None else 0)


def strong_pairs(L: np.ndarray, k_min: float) -> int:
    """Number of pairs ``i < j`` with ``|L_ij| / sqrt(L_ii L_jj) >= k_min`` (> 0).
    Every threshold of :data:`parasite.network.threshold.CANDIDATES` keeps at least
    the pairs of its largest, so with ``k_min`` that one this bounds the full model's
    coupling count from below."""
    count = 0
    for r0, k in coupling_blocks(L):
        k = np.abs(k)
        k[np.arange(len(k)), np.arange(r0, r0 + len(k))] = 0.0
        count += int(np.count_nonzero((k >= k_min) & (k > 0)))
    return count // 2


def choose_model(network: Network, model: str = "auto", *, f_max: float = DEFAULT_FMAX,
                 tolerance: float = DEFAULT_TOLERANCE,
                 ladders: BranchLadders | None = None) -> tuple[str, Reduction | None, str]:
    """``(chosen, reduction, why)``: ``chosen`` ``full`` or ``reduced``; with
    ``ladders`` the broadband network is reduced (its full model is the ladders)."""
    if model not in MODELS:
        raise ValueError(f"model must be one of {', '.join(MODELS)}, not {model!r}")
    if model == "full" or not network.branches:
        return "full", None, "given (--model full)" if model == "full" else "no copper"
    if model == "auto" and network.options.min_coupling is not None:
        return "full", None, "--min-coupling given: it sets the full model's couplings"
    try:
        red = reduce_for_netlist(network, f_max=f_max, tolerance=tolerance, ladders=ladders)
    except np.linalg.LinAlgError as exc:  # e.g. a branch without resistance: R not definite
        if model == "auto":
            return "full", None, f"no reduced model: {exc}"
        raise ExtractionError(f"the copper cannot be reduced ({exc}); write it with --model full",
                              file=network.extraction.inputs.routes_path) from exc
    if model == "reduced":
        return "reduced", red, "given (--model reduced)"
    if not red.acceptable:
        return "full", red, "the reduced model missed the tolerance or the passivity check"
    if not red.full_exact and red.reduced_size <= AUTO_RATIO * red.full_size:
        return "reduced", red, (f"smaller: {red.reduced_size} elements against at least "
                                f"{red.full_size} (inductors, couplings, resistors; the "
                                f"full model's coupling threshold was not searched)")
    if not red.full_exact:
        red.full_size, red.full_exact = full_model_size(network), True
    if red.reduced_size <= AUTO_RATIO * red.full_size:
        return "reduced", red, (f"smaller: {red.reduced_size} elements against "
                                f"{red.full_size} (inductors, couplings, resistors)")
    return "full", red, (f"the reduced model is not less than half the size: {red.reduced_size} "
                         f"elements against {red.full_size}")


def reduction_report(chosen: str, red: Reduction | None, why: str) -> dict[str, Any]:
    """The report's ``model`` section (SI; errors as complex relative errors)."""
    out: dict[str, Any] = {"written": chosen, "rule": why}
    if red is None:
        return out
    m, r = red.model, red.realisation

    def fin(x: float) -> float | None:
        return float(x) if math.isfinite(x) else None

    out.update({
        "ports": m.n_ports,
        "order": m.order,
        "full_order": m.full_order,
        "f_max": m.f_max,
        "tolerance": m.tolerance,
        "error_over_frequency": [[float(f), float(e)] for f, e in zip(m.freqs, m.errors,
                                                                       strict=True)],
        "max_error": fin(m.max_error),
        "max_error_as_written": fin(r.max_error),
        "passivity": {"min_eigenvalue_R": fin(m.min_eig_R), "min_eigenvalue_L": fin(m.min_eig_L),
                      "min_eigenvalue_L_as_written": fin(r.min_eig_L),
                      "min_eigenvalue_G_as_written": fin(r.min_eig_G),
                      "passive": bool(red.passive)},
        "size": {"full": red.full_size, "full_exact": red.full_exact,
                 "reduced": red.reduced_size},
    })
    return out


def fast_reduction_report(red: Reduction, found: OperatorReduction, why: str) -> dict[str, Any]:
    """:func:`reduction_report` of a fast-path reduction, with how it was found: the
    greedy steps (frequency, estimated and checked error, GMRES iterations per block of
    ports solved together),
    and the estimated error of the written model on the frequency grid."""
    from parasite.network.reduce_operator import PORT_BLOCK, SOLVE_RTOL

    out = reduction_report("reduced", red, why)
    out["error_over_frequency_note"] = (
        "at the frequencies where the full network was solved (the inductance as an "
        "operator); elsewhere estimated: estimated_error_over_frequency")
    out["estimated_error_over_frequency"] = [[float(f), float(e)] for f, e in
                                             zip(found.grid, found.estimate, strict=True)]
    out["method"] = ("greedy: exact solves of every port at the frequency of largest "
                     "estimated error, joined to the model's currents until the error "
                     "there is within the tolerance")
    out["steps"] = [{"frequency": s["frequency"], "estimated_error": s["estimate"],
                     "error": s["error"], "states_before": s["states"],
                     "gmres_iterations_per_block": list(s["iterations"])}
                    for s in found.steps]
    out["ports_per_block"] = PORT_BLOCK
    out["gmres_iterations"] = found.iterations
    out["gmres_rtol"] = SOLVE_RTOL
    return out
