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

Pours: a loop's current through a meshed pour (segments of kind ``cell``)
divides over its cells like any parallel copper; :func:`pour_uses` names the
pours it uses, with their cells' summed term.

Frequency: a loop's ``frequency`` sets how current divides between parallel
paths. Without one the low-frequency limit applies (reported as 0 Hz): the
current divides as the resistances dictate, and
``L_loop = i0^T L i0``, ``R_loop = i0^T R i0`` with that division ``i0`` (the
first-order expansion of ``Z`` at ``omega -> 0``; the current's own first-order
change does not contribute because the solution is stationary). This is the
conservative choice for a budget: the high-frequency division minimises
``i^T L i`` over the same currents, so it never gives more inductance.

Parts' own inductance (``[[part]]``, a capacitor's ESL, a package's lead
inductance): every terminal of the loop's path that has one adds it in series
(the loop current passes each of its terminals once per visit), uncoupled to
the copper. ``inductance`` is the total, ``copper_inductance`` the copper's
share and ``parts`` the parts' terms; the segment terms add up to the copper's
share.

These are estimates from closed-form partial inductances (and, for parts,
datasheet values that depend on mounting): confirm them by measurement before
relying on them.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from geometry.model import CopperGraph
from parasite.network.ports import TerminalLookup, loop_port
from parasite.network.solve import solve_port, top_pair_terms
from parasite.units import engineering

DEFAULT_TOP_PAIRS = 10
"""How many segment pairs ``loop_results`` keeps per loop (largest terms first)."""
POUR_CURRENT_FLOOR = 1e-3
"""A pour is used by a loop when one of its cells carries at least this share of
the loop current (A per A)."""


@dataclass(frozen=True)
class PourUse:
    """A pour that carries a loop's current: ``source`` its entry (``pour[i]``),
    ``inductance`` the sum of its cells' terms (H; they add up with the other
    segments' terms to the loop inductance), ``peak_current`` the largest cell
    current per 1 A of loop current (A/A), ``cells`` the cells carrying at
    least :data:`POUR_CURRENT_FLOOR` of it."""

    source: str
    name: str | None
    net: str
    layer: str
    inductance: float  # H
    peak_current: float  # A per A
    cells: int


def pour_uses(graph: CopperGraph, segments: np.ndarray, currents: np.ndarray,
              terms: np.ndarray) -> tuple[PourUse, ...]:
    """The pours among ``segments`` (indices into the graph) whose cells carry at
    least :data:`POUR_CURRENT_FLOOR` of the loop current (``currents``, per 1 A),
    with their cells' summed ``terms`` (H)."""
    by_source: dict[str, list[int]] = {}
    for k, s in enumerate(segments.tolist()):
        seg = graph.segments[int(s)]
        if seg.kind == "cell":
            by_source.setdefault(seg.source, []).append(k)
    out = []
    for source in sorted(by_source, key=lambda src: int(src[5:-1])):
        ks = np.asarray(by_source[source])
        mag = np.abs(currents[ks])
        if not mag.size or mag.max() < POUR_CURRENT_FLOOR:
            continue
        seg = graph.segments[int(segments[ks[0]])]
        out.append(PourUse(source=source, name=seg.name, net=seg.net, layer=str(seg.layer),
                           inductance=float(np.sum(terms[ks])), peak_current=float(mag.max()),
                           cells=int(np.count_nonzero(mag >= POUR_CURRENT_FLOOR))))
    return tuple(out)


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
    pours: tuple[PourUse, ...] = ()  # the pours whose cells carry loop current, in file order
    # (N,) current of every graph segment per 1 A of loop current (complex phasor at the
    # loop's frequency, real at 0 Hz; 0 off the loop's nets), for pictures and fields
    currents: Any = field(default=None, compare=False, repr=False)
    # (n,) int, indices of the segments the loop's nets own (the others carry no current)
    segments: Any = field(default=None, compare=False, repr=False)
    copper_inductance: float | None = None  # H, the copper's share (None: as ``inductance``)
    parts: tuple[tuple[str, float], ...] = ()  # (terminal as written, H) per [[part]] on the path
    netlist_resistance: float | None = None  # ohm: the same currents through the R passed in
    # the fast path's solve (parasite.loops_operator): operator, GMRES iterations and
    # tolerance, where the pair terms come from; None on the dense path
    solver: dict[str, Any] | None = field(default=None, compare=False)

    @property
    def over_limit(self) -> bool:
        return self.within_limit is False

    @property
    def copper(self) -> float:
        """The copper's share of the loop inductance (H)."""
        return self.inductance if self.copper_inductance is None else self.copper_inductance

    def segment_currents(self, n_segments: int) -> np.ndarray:
        """(N,) complex segment currents (A per 1 A of loop current) over all
        ``n_segments`` of the graph, 0 on copper the loop's current does not reach;
        positive in a segment's ``from`` -> ``to`` direction."""
        out = np.zeros(n_segments, dtype=complex)
        if self.currents is not None:
            if len(self.currents) != n_segments:
                raise ValueError(f"loop {self.name!r} has currents for {len(self.currents)} "
                                 f"segments, not {n_segments}")
            out[:] = self.currents
        return out


def path_parts(spec: Any, parts: Sequence[Any], netlist: TerminalLookup,
               file: str | None = None) -> tuple[tuple[str, float], ...]:
    """The ``[[part]]`` inductances (terminal as written, H) on the terminals of
    a loop's path, in path order; a part's terminal matches a stop of the same
    element on the same netlist terminal (name or position)."""
    by_element: dict[str, list[Any]] = {}
    for p in parts:
        by_element.setdefault(p.element, []).append(p)
    out = []
    for text in spec.path:
        elem, _, term = text.strip().rpartition(":")
        elem, term = elem.strip().lower(), term.strip().lower()
        for p in by_element.get(elem, []):
            if p.term == term or _same_terminal(netlist, p, term, file):
                out.append((p.terminal, p.inductance))
    return tuple(out)


def _same_terminal(netlist: TerminalLookup, part: Any, term: str, file: str | None) -> bool:
    """Whether ``part``'s terminal is ``term`` of the same element (name or
    position); a terminal the element does not have is the routes file's error."""
    from geometry.errors import RoutesError
    from parasite.errors import NetlistError

    try:
        mine = netlist.terminal_index(part.element, part.term)
    except NetlistError as exc:
        raise RoutesError(f"part terminal {part.terminal!r}: {exc.message}", file=file,
                          line=part.line, key=f"part[{part.index}].terminal") from None
    return mine == netlist.terminal_index(part.element, term)


def _all_currents(n: int, segments: Any, currents: np.ndarray) -> np.ndarray:
    out = np.zeros(n, dtype=np.asarray(currents).dtype)
    out[np.asarray(segments, dtype=np.int64)] = currents
    return out


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
        segments, injection, n_nodes = loop_port(spec, graph, netlist)
        R_all = resistance_at(f) if (resistance_at is not None and f > 0) else R
        L_sub = L[np.ix_(segments, segments)]
        sol = solve_port(
            graph.arrays.node_from[segments].astype(np.int64),
            graph.arrays.node_to[segments].astype(np.int64),
            n_nodes, injection, L_sub, np.asarray(R_all, dtype=float)[segments], f,
        )
        carrying = np.flatnonzero(np.abs(sol.currents) > 1e-12)
        order = carrying[np.lexsort((carrying, -np.abs(sol.segment_terms[carrying])))]
        ids = [graph.segments[int(s)].id for s in segments]
        contributors = tuple((ids[k], float(sol.segment_terms[k])) for k in order)
        self_terms = tuple((ids[k], float(sol.self_terms[k])) for k in order)
        pairs = tuple(
            (ids[a], ids[b], t) for a, b, t in top_pair_terms(sol.currents, L_sub, top_pairs)
        )
        parts = (path_parts(spec, graph.routes.parts, netlist, graph.routes.path)
                 if graph.routes.parts else ())
        total = sol.inductance + math.fsum(v for _, v in parts)
        within = None if spec.limit is None else bool(total <= spec.limit)
        # what the netlist's R cards (``R``) give the same currents: sum R_i |i_i|^2
        r_netlist = float(np.sum(R[segments] * np.abs(sol.currents) ** 2)) if len(R) else 0.0
        results.append(LoopResult(
            name=spec.name, inductance=total, resistance=sol.resistance, frequency=f,
            limit=spec.limit, within_limit=within, contributors=contributors,
            pair_contributors=pairs, index=spec.index, line=spec.line, self_terms=self_terms,
            pours=pour_uses(graph, np.asarray(segments), np.asarray(sol.currents),
                            np.asarray(sol.segment_terms)),
            currents=_all_currents(len(graph.segments), segments, sol.currents),
            segments=np.asarray(segments, dtype=np.int64), copper_inductance=sol.inductance,
            parts=parts,
            netlist_resistance=r_netlist,
        ))
    return results


# ---------------------------------------------------------------------------
# Reports


def loop_result_dict(r: LoopResult, *, top: int = DEFAULT_TOP_PAIRS) -> dict[str, Any]:
    """The JSON report's entry for one loop (SI units; the keys of the
    command-line contract plus ``contributors`` and ``pair_contributors``, the
    ``top`` largest terms by magnitude each, signed, with ``share`` = term /
    loop inductance; ``netlist_resistance``: ohm, the loop's resistance from
    the netlist's R values (DC unless ``--frequency``) beside ``resistance``,
    the skin-effect estimate at ``frequency``; and ``pours`` when the loop's
    current uses a pour)."""

    def share(x: float) -> float | None:
        return x / r.inductance if r.inductance != 0 else None

    return {
        "name": r.name,
        "inductance": r.inductance,
        "copper_inductance": r.copper,
        "parts_inductance": r.inductance - r.copper,
        "parts": [{"terminal": t, "inductance": v} for t, v in r.parts],
        "resistance": r.resistance,
        "netlist_resistance": r.netlist_resistance,
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
    } | ({} if r.solver is None else {"solver": dict(r.solver)}) | (
        {} if not r.pours else {"pours": [
        {"pour": p.source, "name": p.name, "net": p.net, "layer": p.layer,
         "inductance": p.inductance, "share": share(p.inductance),
         "peak_current": p.peak_current, "cells": p.cells}
        for p in r.pours]})


def _row(r: LoopResult | Mapping[str, Any]) -> tuple[str, ...]:
    """Table cells of one loop, from a :class:`LoopResult` or its JSON dict."""
    if isinstance(r, LoopResult):
        name, value, res, freq = r.name, r.inductance, r.resistance, r.frequency
        limit, within, r_net = r.limit, r.within_limit, r.netlist_resistance
        first = r.contributors[0] if r.contributors else None
    else:
        name, value, res, freq = r["name"], r["inductance"], r["resistance"], r["frequency"]
        limit, within = r.get("limit"), r.get("within_limit")
        r_net = r.get("netlist_resistance")
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
        "-" if r_net is None else engineering(r_net, "ohm"),
        "DC limit" if not freq else engineering(freq, "Hz"),
        "-" if limit is None else engineering(limit, "H"),
        status,
        top,
    )


def format_loop_table(results: Sequence[LoopResult] | Sequence[Mapping[str, Any]]) -> str:
    """An aligned text table of loops (from :class:`LoopResult` objects or the
    dicts of :func:`loop_result_dict`): value, resistance at the loop's
    frequency (skin-effect estimate) beside the resistance the netlist's R
    values give (DC unless ``--frequency``), frequency of the current division,
    limit, status and the largest segment term by magnitude; a legend line
    says which resistance is which. Ends with a newline; empty string when
    there are no loops."""
    if not results:
        return ""
    header = ("loop", "inductance", "resistance at f", "netlist R", "division at (f)", "limit",
              "status", "largest term")
    rows = [header] + [_row(r) for r in results]
    numeric = {1, 2, 3, 4, 5}
    widths = [max(len(row[c]) for row in rows) for c in range(len(header))]
    lines = []
    for row in rows:
        cells = [
            cell.rjust(widths[c]) if c in numeric else cell.ljust(widths[c])
            for c, cell in enumerate(row)
        ]
        lines.append("  ".join(cells).rstrip())
    lines.append("(resistance at f: skin-effect estimate at the loop's frequency; netlist R: the "
                 "same currents through the R cards of the augmented netlist, DC values unless "
                 "--frequency)")
    return "\n".join(lines) + "\n"


def _pour_lines(r: LoopResult | Mapping[str, Any], value: float) -> list[str]:
    """Text lines naming the pours a loop's current uses (from a result or its dict)."""
    uses: list[Any] = ([{"pour": p.source, "name": p.name, "layer": p.layer,
                         "inductance": p.inductance, "peak_current": p.peak_current}
                        for p in r.pours]
            if isinstance(r, LoopResult) else list(r.get("pours") or []))
    out = []
    for p in uses:
        label = f"{p['name']} ({p['pour']})" if p.get("name") else str(p["pour"])
        share = f", {100 * p['inductance'] / value:.0f}% of L" if value > 0 else ""
        out.append(f"  pour {label} on layer {p['layer']}: cell terms "
                   f"{engineering(p['inductance'], 'H')}{share}, peak cell current "
                   f"{100 * p['peak_current']:.0f}% of the loop's")
    return out


def signed(value: float, unit: str) -> str:
    """``value`` with an SI prefix and its sign always shown (``+1.2 nH``,
    ``-140 pH``): a negative term is copper that cancels the loop's field."""
    text = engineering(value, unit)
    return text if value <= 0 else "+" + text


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
    """For each loop, its ``top`` largest segment terms and pair terms by
    magnitude, with their sign and share of the loop inductance, as aligned
    text (what to move first; a negative term cancels).

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
        if isinstance(r, LoopResult):
            parts, copper = list(r.parts), r.copper
        else:
            parts = [(str(p["terminal"]), float(p["inductance"])) for p in r.get("parts") or []]
            copper = float(r.get("copper_inductance", value))

        def share(x: float, value: float = value) -> str:
            return f"{100 * x / value:.0f}%" if value > 0 else "-"

        if not segs:
            blocks.append(f"{name}: {engineering(value, 'H')}, no copper carries its current")
            continue
        shown = segs[:top]
        rows = [("segment", "term", "share", "entry" if entries else "")]
        rows += [(sid, signed(t, "H"), share(t), entries.get(sid, "")) for sid, t in shown]
        rest = copper - math.fsum(t for _, t in shown)
        # a dict keeps only the largest terms: whether more copper carries current shows in the sum
        more = (carrying > top if carrying is not None
                else len(segs) > top or abs(rest) > 1e-9 * abs(copper))
        if more:
            label = "rest of the copper" + ("" if carrying is None else f" ({carrying - top} segments)")
            rows.append((label, signed(rest, "H"), share(rest), ""))
        rows += [(f"part at {t}", signed(v, "H"), share(v), "part") for t, v in parts]
        rows += [(f"{a} + {b}", signed(t, "H"), share(t), "mutual") for a, b, t in pairs[:top]]
        widths = [max(len(row[c]) for row in rows) for c in range(4)]
        lines = [f"{name}: {engineering(value, 'H')}, largest terms"]  # by magnitude, signed
        for row in rows:
            cells = (row[0].ljust(widths[0]), row[1].rjust(widths[1]),
                     row[2].rjust(widths[2]), row[3])
            lines.append(("  " + "  ".join(cells)).rstrip())
        lines += _pour_lines(r, value)
        blocks.append("\n".join(lines))
    return "\n\n".join(blocks) + "\n" if blocks else ""
