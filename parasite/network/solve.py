"""Loop inductance and resistance: what a port inserted in a current loop sees.

A loop (routes file, ``[[loop]]``) is a closed path named by element
terminals. Between consecutive terminals of one element the path runs through
that element (ideal: its own inductance is not counted); between consecutive
terminals of one net it runs through that net's copper, where the current
divides freely between parallel copper paths.

Model (nodal/mesh analysis of the copper R-L network, SI units):

* Branches: the segments of the nets the loop visits (copper of other nets
  carries no loop current). Branch impedance matrix
  ``Zb = diag(R) + j*omega*L`` with the dense partial inductance matrix ``L``
  (self and mutual terms, images included).
* Every element hop ``a -> b`` carries the loop current ``I = 1 A``: the copper
  gives up 1 A at terminal ``a``'s node and takes 1 A back at ``b``'s node
  (injection vector ``x``). A port in series with the loop drives exactly this.
* Kirchhoff's current law ``A i = x`` (``A``: sparse node-branch incidence,
  +1 at a segment's ``from`` node, -1 at its ``to`` node) fixes the currents on
  a spanning tree; the remaining freedom is one current per independent mesh
  (fundamental cycles of the tree's chords), fixed by Kirchhoff's voltage law
  ``B^T Zb i = 0``. Where the copper is a tree there is no mesh and the result
  is the signed sum of partial inductances along the path.
* Port impedance (Tellegen's theorem, unit port current):
  ``Z = sum_ij conj(i_i) Zb_ij i_j``, so
  ``R_loop = Re Z = sum_i R_i |i_i|^2`` and
  ``L_loop = Im Z / omega = sum_ij L_ij Re(conj(i_i) i_j)``.

Contributions (they add up to ``L_loop`` exactly): the term of segment ``i``
is ``L_ii |i_i|^2 + sum_{j != i} L_ij Re(conj(i_i) i_j)`` (its self term plus
half of each of its mutual terms); the term of a pair ``i < j`` is
``2 L_ij Re(conj(i_i) i_j)``, and the self terms plus all pair terms add up to
``L_loop`` too. A negative term is copper whose field cancels the loop's
(typically the return path running under the go path).

Frequency: a loop's ``frequency`` sets how current divides between parallel
paths. Without one the low-frequency limit applies (reported as 0 Hz): the
current divides as the resistances dictate, and
``L_loop = i0^T L i0``, ``R_loop = i0^T R i0`` with that division ``i0`` (the
first-order expansion of ``Z`` at ``omega -> 0``; the current's own first-order
change does not contribute because the solution is stationary). This is the
conservative choice for a budget: the high-frequency division minimises
``i^T L i`` over the same currents, so it never gives more inductance.

These are estimates from closed-form partial inductances: confirm them by
measurement before relying on them.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components, minimum_spanning_tree
from scipy.sparse.linalg import splu

from geometry.errors import RoutesError
from geometry.model import CopperGraph, LoopSpec, canonical_net
from parasite.errors import ParasiteError

DEFAULT_TOP_PAIRS = 10
"""How many segment pairs ``loop_results`` keeps per loop (largest terms first)."""


class TerminalLookup(Protocol):
    """What the loop solver needs from the netlist (``parasite.netlist.Netlist``)."""

    def terminal_index(self, element: str, terminal: str) -> int: ...

    def terminal_node(self, element: str, terminal: str) -> str: ...


@dataclass(frozen=True)
class LoopResult:
    """One loop's port impedance, split into the terms of its copper.

    ``frequency`` is the frequency of the current division in Hz (0.0: the
    low-frequency limit). ``contributors`` lists every segment that carries loop
    current as ``(segment id, term in H)``, largest term first; the terms add up
    to ``inductance``. ``pair_contributors`` lists the largest mutual terms
    ``(id_a, id_b, term in H)`` of segment pairs, largest first.
    """

    name: str
    inductance: float  # H
    resistance: float  # ohm
    frequency: float  # Hz, 0.0 = low-frequency limit
    limit: float | None  # H
    within_limit: bool | None
    contributors: tuple[tuple[str, float], ...]
    pair_contributors: tuple[tuple[str, str, float], ...]
    index: int = 0  # position among the routes file's [[loop]] entries
    line: int | None = None  # line of the entry in the routes file, where known
    self_terms: tuple[tuple[str, float], ...] = ()  # (segment id, L_ii |i_i|^2) per segment

    @property
    def over_limit(self) -> bool:
        return self.within_limit is False


# ---------------------------------------------------------------------------
# The network solver (pure arrays)


def _incidence(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int) -> sp.csc_matrix:
    """Node-branch incidence: +1 at each branch's ``from`` node, -1 at its ``to``
    node (a branch from a node to itself gives an empty column)."""
    n = len(node_from)
    cols = np.concatenate([np.arange(n), np.arange(n)])
    rows = np.concatenate([node_from, node_to])
    vals = np.concatenate([np.ones(n), -np.ones(n)])
    return sp.csc_matrix((vals, (rows, cols)), shape=(n_nodes, n))


def _spanning_forest(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int) -> np.ndarray:
    """Boolean mask of the branches of a spanning forest (the first of parallel
    branches and the earliest branches preferred; branches from a node to
    itself are never in it)."""
    n = len(node_from)
    u = np.minimum(node_from, node_to).astype(np.int64)
    v = np.maximum(node_from, node_to).astype(np.int64)
    candidates = np.flatnonzero(u != v)
    _, first = np.unique(u[candidates] * n_nodes + v[candidates], return_index=True)
    candidates = candidates[np.sort(first)]
    weights = sp.coo_matrix(
        (candidates + 1.0, (u[candidates], v[candidates])), shape=(n_nodes, n_nodes)
    ).tocsr()
    tree = minimum_spanning_tree(weights)
    mask = np.zeros(n, dtype=bool)
    mask[np.rint(tree.data).astype(np.int64) - 1] = True
    return mask


def node_components(node_from: np.ndarray, node_to: np.ndarray, n_nodes: int) -> np.ndarray:
    """Connected-component label of every node (isolated nodes included)."""
    adj = sp.coo_matrix(
        (np.ones(len(node_from)), (node_from, node_to)), shape=(n_nodes, n_nodes)
    )
    return connected_components(adj, directed=False)[1]


def branch_currents(
    node_from: np.ndarray,
    node_to: np.ndarray,
    n_nodes: int,
    injection: np.ndarray,
    L: np.ndarray,
    R: np.ndarray,
    omega: float,
) -> np.ndarray:
    """Branch currents (A) of an R-L network driven by node injections.

    ``injection[n]`` is the current (A) that enters node ``n`` from outside; it
    must add up to zero on every connected piece. Branch ``k`` runs
    ``node_from[k] -> node_to[k]`` with resistance ``R[k]`` (ohm) and partial
    inductances ``L[k, :]`` (H). At ``omega > 0`` (rad/s) the currents are
    complex phasors; at ``omega == 0`` they are the real low-frequency-limit
    division (resistive). Kirchhoff's laws on a spanning tree and its
    fundamental cycles; sparse LU (scipy.sparse.linalg.splu) for the tree.
    """
    node_from = np.asarray(node_from, dtype=np.int64)
    node_to = np.asarray(node_to, dtype=np.int64)
    n = len(node_from)
    if n == 0:
        return np.zeros(0)
    labels = node_components(node_from, node_to, n_nodes)
    _, roots = np.unique(labels, return_index=True)
    keep = np.ones(n_nodes, dtype=bool)
    keep[roots] = False

    tree = _spanning_forest(node_from, node_to, n_nodes)
    chords = np.flatnonzero(~tree)
    A = _incidence(node_from, node_to, n_nodes)[np.flatnonzero(keep)]
    A_tree = A[:, np.flatnonzero(tree)].tocsc()
    x = np.asarray(injection, dtype=float)[keep]

    i_p = np.zeros(n)
    if A_tree.shape[0]:
        lu = splu(A_tree)
        i_p[tree] = lu.solve(x)
    if len(chords) == 0:
        return i_p
    # Fundamental cycles: chord k plus the tree branches that close it. The
    # entries are 0, +1 or -1 (a tree path); rounding makes them exact, and the
    # sparse form keeps the products below at nnz(B) * n instead of n^2 * c.
    c = len(chords)
    rows = [chords]
    cols = [np.arange(c)]
    vals = [np.ones(c)]
    if A_tree.shape[0]:
        path = -np.rint(lu.solve(A[:, chords].toarray()))
        r, k = np.nonzero(path)
        rows.append(np.flatnonzero(tree)[r])
        cols.append(k)
        vals.append(path[r, k])
    B = sp.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                      shape=(n, c))
    BtR = (B.T @ sp.diags(R)).tocsr()
    mesh_r = (BtR @ B).toarray()
    rhs_r = BtR @ i_p
    if omega == 0.0:
        return np.asarray(i_p + B @ np.linalg.solve(mesh_r, -rhs_r))
    BtL = np.asarray(B.T @ L)  # (c, n) dense
    mesh = mesh_r + 1j * omega * np.asarray((B.T @ BtL.T).T)
    rhs = rhs_r + 1j * omega * (BtL @ i_p)
    return np.asarray(i_p + B @ np.linalg.solve(mesh, -rhs))


@dataclass(frozen=True)
class PortSolution:
    """Port impedance of a network at one frequency, and its terms."""

    currents: np.ndarray  # (n,) branch currents per 1 A port current (complex, or real at DC)
    inductance: float  # H
    resistance: float  # ohm
    segment_terms: np.ndarray  # (n,) H, add up to ``inductance``
    self_terms: np.ndarray  # (n,) H, L_ii |i_i|^2


def solve_port(
    node_from: np.ndarray,
    node_to: np.ndarray,
    n_nodes: int,
    injection: np.ndarray,
    L: np.ndarray,
    R: np.ndarray,
    frequency: float,
) -> PortSolution:
    """Loop inductance (H) and resistance (ohm) seen by a port that drives
    ``injection`` (per 1 A) into the network, at ``frequency`` Hz (0: the
    low-frequency limit). See the module docstring for the equations."""
    L = np.asarray(L, dtype=float)
    R = np.asarray(R, dtype=float)
    omega = 2.0 * math.pi * frequency
    i = branch_currents(node_from, node_to, n_nodes, injection, L, R, omega)
    if len(i) == 0:
        z = np.zeros(0)
        return PortSolution(z, 0.0, 0.0, z, z)
    terms = np.real(np.conj(i) * (L @ i))
    magnitude2 = np.abs(i) ** 2
    return PortSolution(
        currents=i,
        inductance=float(terms.sum()),
        resistance=float(R @ magnitude2),
        segment_terms=terms,
        self_terms=np.diag(L) * magnitude2,
    )


def top_pair_terms(
    currents: np.ndarray, L: np.ndarray, count: int, *, tolerance: float = 1e-12
) -> list[tuple[int, int, float]]:
    """The ``count`` largest mutual terms ``2 L_ij Re(conj(i_i) i_j)`` (H), ``i < j``,
    largest first, as ``(i, j, term)`` (indices into ``currents``)."""
    if count <= 0 or len(currents) < 2:
        return []
    active = np.flatnonzero(np.abs(currents) > tolerance)
    if len(active) < 2:
        return []
    ia = currents[active]
    P = 2.0 * L[np.ix_(active, active)] * np.real(np.conj(ia)[:, None] * ia[None, :])
    a, b = np.triu_indices(len(active), k=1)
    values = P[a, b]
    k = min(count, len(values))
    pick = np.argpartition(-values, k - 1)[:k]
    # Largest first; ties in index order so that the output is deterministic.
    pick = pick[np.lexsort((b[pick], a[pick], -values[pick]))]
    return [(int(active[a[p]]), int(active[b[p]]), float(values[p])) for p in pick]


# ---------------------------------------------------------------------------
# From the routes file's loops to the network


@dataclass(frozen=True)
class _Stop:
    text: str  # terminal as written
    element: str
    net: str
    node: int  # graph node id, or a node past the graph's for a net without copper


def _routes_error(spec: LoopSpec, file: str, key: str, message: str) -> RoutesError:
    return RoutesError(message, file=file, line=spec.line, key=key)


def _resolve_stops(
    spec: LoopSpec, graph: CopperGraph, netlist: TerminalLookup, extra: dict[str, int]
) -> list[_Stop]:
    file = graph.routes.path
    placed: dict[tuple[str, int], int] = {}
    for pn in graph.pins:
        try:
            placed[(pn.pin.element, netlist.terminal_index(pn.pin.element, pn.pin.term))] = pn.node
        except ParasiteError:  # the pin check reports these; a loop cannot use them
            continue
    if len(spec.path) < 2:
        raise _routes_error(
            spec, file, f"loop[{spec.index}].path",
            f"loop {spec.name!r} names {len(spec.path)} terminal(s); a loop needs at least two, "
            "for example [\"C5:1\", \"M1:d\", \"M1:s\", \"C5:2\"]",
        )
    stops: list[_Stop] = []
    for j, text in enumerate(spec.path):
        key = f"loop[{spec.index}].path[{j}]"
        element, colon, term = text.partition(":")
        element, term = element.strip().lower(), term.strip().lower()
        if not colon or not element or not term:
            raise _routes_error(
                spec, file, key,
                f"{text!r} is not a terminal; write ELEMENT:TERMINAL, for example \"M1:d\" or \"C5:1\"",
            )
        try:
            index = netlist.terminal_index(element, term)
            net = netlist.terminal_node(element, term)
        except ParasiteError as exc:
            raise _routes_error(spec, file, key, f"terminal {text!r}: {exc.message}") from exc
        net = canonical_net(net)
        if (element, index) in placed:
            node = placed[(element, index)]
        elif net in graph.anchors:
            node = graph.anchors[net]
        else:  # a net without copper: one ideal node
            node = extra.setdefault(net, len(graph.nodes) + len(extra))
        stops.append(_Stop(text, element, net, node))
    return stops


def _loop_network(
    spec: LoopSpec, graph: CopperGraph, netlist: TerminalLookup
) -> tuple[np.ndarray, np.ndarray, int]:
    """The segments (indices) of the nets the loop visits, the injection vector
    (per 1 A) and the number of nodes (graph nodes plus one per copper-less net)."""
    extra: dict[str, int] = {}
    stops = _resolve_stops(spec, graph, netlist, extra)
    n_nodes = len(graph.nodes) + len(extra)
    injection = np.zeros(n_nodes)
    nets: set[str] = set()
    hops: list[tuple[int, _Stop, _Stop]] = []
    through_element = False
    for j, a in enumerate(stops):
        b = stops[(j + 1) % len(stops)]
        if a.element == b.element:  # through the element: it carries the loop current
            through_element = True
            injection[a.node] -= 1.0
            injection[b.node] += 1.0
        elif a.net == b.net:
            nets.add(a.net)
            hops.append((j, a, b))
        else:
            raise _routes_error(
                spec, graph.routes.path, f"loop[{spec.index}].path[{(j + 1) % len(stops)}]",
                f"loop {spec.name!r} goes from {a.text!r} (net {a.net!r}) to {b.text!r} "
                f"(net {b.net!r}): consecutive terminals must be on the same net (the path runs "
                "through its copper) or of the same element (the path runs through it)",
            )
    # The check is on the hops, not on the injection: element hops between the same
    # two nodes cancel there (two elements between the same two copper-less nets),
    # and then no copper carries loop current and the loop's copper inductance is 0.
    if not through_element:
        raise _routes_error(
            spec, graph.routes.path, f"loop[{spec.index}].path",
            f"loop {spec.name!r} never passes through an element, so no current flows in it; "
            "name two terminals of one element in a row (or first and last) where the loop "
            "runs through it",
        )
    net_of = graph.arrays.net_index
    wanted = [k for k, name in enumerate(graph.nets) if name in nets]
    segments = np.flatnonzero(np.isin(net_of, wanted)) if len(net_of) else np.zeros(0, int)
    nf = graph.arrays.node_from[segments].astype(np.int64)
    nt = graph.arrays.node_to[segments].astype(np.int64)
    labels = node_components(nf, nt, n_nodes)
    for j, a, b in hops:
        if labels[a.node] != labels[b.node]:
            raise _routes_error(
                spec, graph.routes.path, f"loop[{spec.index}].path[{(j + 1) % len(stops)}]",
                f"loop {spec.name!r}: no copper of net {a.net!r} joins {a.text!r} to {b.text!r} "
                "(the net's copper is in separate pieces, or a terminal sits on the net's anchor "
                "away from this piece); connect the copper or place the terminal with a [[pin]]",
            )
    return segments, injection, n_nodes


def loop_results(
    graph: CopperGraph,
    netlist: TerminalLookup,
    L: np.ndarray,
    R: np.ndarray,
    *,
    frequency: float | None = None,
    resistance_at: Callable[[float], np.ndarray] | None = None,
    top_pairs: int = DEFAULT_TOP_PAIRS,
) -> list[LoopResult]:
    """Inductance (H) and resistance (ohm) of every loop of the routes file.

    ``L`` (N x N, H) and ``R`` (N, ohm) are the segments' partial inductance
    matrix and resistances. ``frequency`` (Hz) applies to loops that give
    none (None: the low-frequency limit). A loop with a frequency uses the
    resistances at that frequency (skin effect estimate) from
    ``resistance_at(f)``, by default :func:`parasite.extract.resistances` of the
    graph's copper; ``R`` serves the low-frequency limit. Raises
    :class:`geometry.errors.RoutesError` for a loop that names an unknown
    terminal or a path that does not close.
    """
    L = np.asarray(L, dtype=float)
    R = np.asarray(R, dtype=float)
    if resistance_at is None and len(graph.segments):
        from parasite.extract import resistances

        def resistance_at(f: float) -> np.ndarray:
            return resistances(graph.arrays, graph.routes.copper, f)

    results = []
    for spec in graph.routes.loops:
        f = spec.frequency if spec.frequency is not None else frequency
        f = 0.0 if f is None else float(f)
        segments, injection, n_nodes = _loop_network(spec, graph, netlist)
        R_all = resistance_at(f) if (resistance_at is not None and f > 0) else R
        L_sub = L[np.ix_(segments, segments)]
        sol = solve_port(
            graph.arrays.node_from[segments].astype(np.int64),
            graph.arrays.node_to[segments].astype(np.int64),
            n_nodes, injection, L_sub, np.asarray(R_all, dtype=float)[segments], f,
        )
        carrying = np.flatnonzero(np.abs(sol.currents) > 1e-12)
        order = carrying[np.lexsort((carrying, -sol.segment_terms[carrying]))]
        ids = [graph.segments[int(s)].id for s in segments]
        contributors = tuple((ids[k], float(sol.segment_terms[k])) for k in order)
        self_terms = tuple((ids[k], float(sol.self_terms[k])) for k in order)
        pairs = tuple(
            (ids[a], ids[b], t) for a, b, t in top_pair_terms(sol.currents, L_sub, top_pairs)
        )
        within = None if spec.limit is None else bool(sol.inductance <= spec.limit)
        results.append(LoopResult(
            name=spec.name, inductance=sol.inductance, resistance=sol.resistance, frequency=f,
            limit=spec.limit, within_limit=within, contributors=contributors,
            pair_contributors=pairs, index=spec.index, line=spec.line, self_terms=self_terms,
        ))
    return results


# ---------------------------------------------------------------------------
# Reports


def loop_result_dict(r: LoopResult, *, top: int = DEFAULT_TOP_PAIRS) -> dict[str, Any]:
    """The JSON report's entry for one loop (SI units; the keys of the
    command-line contract plus ``contributors`` and ``pair_contributors``, the
    ``top`` largest terms each, with ``share`` = term / loop inductance)."""

    def share(x: float) -> float | None:
        return x / r.inductance if r.inductance != 0 else None

    return {
        "name": r.name,
        "inductance": r.inductance,
        "resistance": r.resistance,
        "frequency": r.frequency,
        "limit": r.limit,
        "within_limit": r.within_limit,
        "contributors": [
            {"segment": sid, "inductance": term, "share": share(term)}
            for sid, term in r.contributors[:top]
        ],
        "pair_contributors": [
            {"a": a, "b": b, "inductance": term, "share": share(term)}
            for a, b, term in r.pair_contributors[:top]
        ],
    }


_PREFIXES = ((1e-15, "f"), (1e-12, "p"), (1e-9, "n"), (1e-6, "u"), (1e-3, "m"), (1.0, ""),
             (1e3, "k"), (1e6, "M"), (1e9, "G"))


def engineering(value: float, unit: str, digits: int = 3) -> str:
    """``value`` with an SI prefix and ``digits`` significant digits, e.g. ``1.83 nH``."""
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}"
    scale, prefix = _PREFIXES[0]
    for s, p in _PREFIXES:
        if abs(value) >= s * 0.9995:
            scale, prefix = s, p
    return f"{value / scale:.{digits}g} {prefix}{unit}"


def _row(r: LoopResult | Mapping[str, Any]) -> tuple[str, ...]:
    """Table cells of one loop, from a :class:`LoopResult` or its JSON dict."""
    if isinstance(r, LoopResult):
        name, value, res, freq = r.name, r.inductance, r.resistance, r.frequency
        limit, within = r.limit, r.within_limit
        first = r.contributors[0] if r.contributors else None
    else:
        name, value, res, freq = r["name"], r["inductance"], r["resistance"], r["frequency"]
        limit, within = r.get("limit"), r.get("within_limit")
        c = r.get("contributors") or []
        first = (c[0]["segment"], c[0]["inductance"]) if c else None
    top = "-"
    if first is not None and value > 0:
        top = f"{first[0]} ({100 * first[1] / value:.0f}%)"
    status = "no limit" if within is None else ("ok" if within else "OVER")
    return (
        str(name),
        engineering(value, "H"),
        engineering(res, "ohm"),
        "DC limit" if not freq else engineering(freq, "Hz"),
        "-" if limit is None else engineering(limit, "H"),
        status,
        top,
    )


def format_loop_table(results: Sequence[LoopResult] | Sequence[Mapping[str, Any]]) -> str:
    """An aligned text table of loops (from :class:`LoopResult` objects or the
    dicts of :func:`loop_result_dict`): value, resistance, frequency of the
    current division, limit, status and the largest segment term. Ends with a
    newline; empty string when there are no loops."""
    if not results:
        return ""
    header = ("loop", "inductance", "resistance", "division at", "limit", "status",
              "largest term")
    rows = [header] + [_row(r) for r in results]
    numeric = {1, 2, 3, 4}
    widths = [max(len(row[c]) for row in rows) for c in range(len(header))]
    lines = []
    for row in rows:
        cells = [
            cell.rjust(widths[c]) if c in numeric else cell.ljust(widths[c])
            for c, cell in enumerate(row)
        ]
        lines.append("  ".join(cells).rstrip())
    return "\n".join(lines) + "\n"


def _contributor_rows(
    r: LoopResult | Mapping[str, Any],
) -> tuple[str, float, list[tuple[str, float]], list[tuple[str, str, float]], int | None]:
    """Name, inductance, segment terms, pair terms of one loop (a
    :class:`LoopResult` or its JSON dict), and the number of segments that carry
    loop current (None when only the dict's largest terms are known)."""
    if isinstance(r, LoopResult):
        return (r.name, r.inductance, list(r.contributors), list(r.pair_contributors),
                len(r.contributors))
    segs = [(str(c["segment"]), float(c["inductance"])) for c in r.get("contributors") or []]
    pairs = [(str(c["a"]), str(c["b"]), float(c["inductance"]))
             for c in r.get("pair_contributors") or []]
    return str(r["name"]), float(r["inductance"]), segs, pairs, None


def format_loop_contributors(
    results: Sequence[LoopResult] | Sequence[Mapping[str, Any]],
    top: int = 5,
    graph: CopperGraph | None = None,
    *,
    where: Mapping[str, str] | None = None,
) -> str:
    """For each loop, its ``top`` largest segment terms and pair terms with their
    share of the loop inductance, as aligned text (what to move first).

    ``results`` are :class:`LoopResult` objects or the dicts of
    :func:`loop_result_dict` (which keep only the largest terms). When more
    segments carry loop current than are shown, a ``rest of the copper`` row
    gives the loop inductance minus the terms shown, so that the segment rows
    add up to the loop's value. Pair terms (``mutual``) are another split of the
    same value (self terms plus pair terms) and are not part of that sum. With
    ``graph`` (or ``where``: segment id -> entry name), each segment also names
    the routes-file entry it comes from."""
    entries: dict[str, str] = {}
    if graph is not None:
        entries = {s.id: s.name or s.source for s in graph.segments}
    if where is not None:
        entries.update(where)
    blocks = []
    for r in results:
        name, value, segs, pairs, carrying = _contributor_rows(r)

        def share(x: float, value: float = value) -> str:
            return f"{100 * x / value:.0f}%" if value > 0 else "-"

        if not segs:
            blocks.append(f"{name}: {engineering(value, 'H')}, no copper carries its current")
            continue
        shown = segs[:top]
        rows = [("segment", "term", "share", "entry" if entries else "")]
        rows += [(sid, engineering(t, "H"), share(t), entries.get(sid, "")) for sid, t in shown]
        rest = value - math.fsum(t for _, t in shown)
        # a dict keeps only the largest terms: whether more copper carries current shows in the sum
        more = (carrying > top if carrying is not None
                else len(segs) > top or abs(rest) > 1e-9 * abs(value))
        if more:
            label = "rest of the copper" + ("" if carrying is None else f" ({carrying - top} segments)")
            rows.append((label, engineering(rest, "H"), share(rest), ""))
        rows += [(f"{a} + {b}", engineering(t, "H"), share(t), "mutual") for a, b, t in pairs[:top]]
        widths = [max(len(row[c]) for row in rows) for c in range(4)]
        lines = [f"{name}: {engineering(value, 'H')}, largest terms"]
        for row in rows:
            cells = (row[0].ljust(widths[0]), row[1].rjust(widths[1]),
                     row[2].rjust(widths[2]), row[3])
            lines.append(("  " + "  ".join(cells)).rstrip())
        blocks.append("\n".join(lines))
    return "\n\n".join(blocks) + "\n" if blocks else ""
