"""Probes: the measurement's own leads in the circuit model.

A ``[[probe]]`` of the routes file (:class:`geometry.model.Probe`) has two
leads, round wires along polylines in space, from their contacts on the copper
to the instrument's input. The copper graph makes each lead a chain of
``probe`` segments (nets ``probe:<name>:tip`` and ``probe:<name>:ground``)
that starts at its contact node; the extraction couples them to all copper
like any other segment. Here:

* the netlist side (elsewhere): the lead end nodes get stable names
  (:mod:`parasite.network.names`), every coupling of a lead is written,
  whatever its |k| (:func:`parasite.network.couplings.select_couplings`),
  since a lead's pick-up is the sum of many weak couplings, and the writer
  puts the instrument input (R in parallel with C) between the lead ends;
* here, the report side: each probe's reading node pair, its leads' loop inductance
  and the resonance of that inductance with the instrument's capacitance, and
  its pick-up from each ``[[loop]]`` of the routes file (:func:`probe_report`).

Pick-up (Faraday's law, e.g. Griffiths, *Introduction to Electrodynamics*,
4th ed., 2013, ch. 7.1-7.2; in partial-inductance form, Ruehli, "Inductance
calculations in a complex integrated circuit environment", IBM J. Res. Dev.
16(5), 1972). Orient the probe loop from the tip contact along the tip lead to
the instrument, through it, and back along the ground lead to the ground
contact. With ``v`` = +1 on the tip lead's segments, -1 on the ground lead's
(both leads' segments point from contact to instrument), and ``c`` the
segment currents of a circuit loop per ampere of its current ``I`` (the
current division of the loop's own report at the loop's frequency,
:attr:`parasite.loops.LoopResult.currents`), the leads see the mutual
inductance ``M = v^T L c`` (H). When the leads carry no current of their own
(a high-impedance input) the reading is

    V(tip end) - V(ground end) = V(tip contact) - V(ground contact) - j omega M I,

so ``omega |M|`` (V/A) is the EMF that the leads' loop adds per ampere of
loop current at angular frequency omega. The node potentials of the contacts
are those of the partial-inductance model: only the total reading is a
physical quantity, and it depends on the path of the leads. Against the ring
of the same loop, whose voltage across the ringing capacitance is
``omega L_loop I`` (a series LC at resonance), the pick-up is ``|M| / L_loop``
of the ring, independent of current and frequency.

The leads' own loop inductance ``v^T L v`` with the instrument's capacitance
``C`` resonates at ``1 / (2 pi sqrt(L C))`` (Thomson's formula): a long
ground lead rings there on every fast edge, whatever the circuit does.

Both ways of holding ``L`` share :func:`probe_report`: the dense matrix (``augment``,
``report``) and the inductance operator (``report --inductance fast``,
:mod:`parasite.report_fast`). ``v^T L v`` comes from the exact dense block of the
leads' own segments, ``L v`` from one product of the operator with every probe's
``v`` at once, and ``M = (L v)^T c`` (``L`` is symmetric). On the fast path ``M``
carries the error of the operator's loop currents to first order (the loop
inductance, stationary in the currents, carries it to second order): docs/probes.md.

Caution: probing a live power stage is hazardous (high voltage, stored energy,
large currents); follow local codes and licensed practice. The numbers are
estimates from a simplified model, to be confirmed by measurement.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from parasite.network.names import reading_plus
from parasite.network.ports import ProbeNodes, probe_nodes
from parasite.units import engineering

if TYPE_CHECKING:
    from geometry.model import CopperGraph
    from parasite.extract.operator import InductanceOperator
    from parasite.loops import LoopResult


CAUTION = (
    "Probing a live power stage is hazardous (high voltage, stored energy, large currents): "
    "follow local codes and licensed practice. Probe readings and pick-up are estimates, to be "
    "confirmed by measurement."
)


def probe_reading(result: Any, report: dict[str, Any], name: str,
                  routes_path: str) -> tuple[np.ndarray, np.ndarray, dict[str, Any]]:
    """The reading of probe ``name`` (case-insensitive) in a transient run of
    the augmented netlist: time (s), v(plus) - v(minus) (V), and the report's
    entry of the probe. Raises :class:`geometry.errors.RoutesError` for an
    unknown probe and :class:`parasite.errors.SimulationError` when the run has
    no transient plot."""
    from geometry.errors import RoutesError
    from parasite.errors import SimulationError

    entries = report.get("probes", [])
    entry = next((p for p in entries if p["name"].lower() == name.strip().lower()), None)
    if entry is None:
        known = ", ".join(repr(p["name"]) for p in entries) or "none"
        raise RoutesError(f"no probe named {name!r}; the routes file's probes: {known}",
                          file=routes_path)
    plot = next((p for p in reversed(result.plots) if "transient" in p.name.lower()), None)
    if plot is None:
        raise SimulationError("ngspice ran no transient analysis; the netlist needs a .tran card",
                              file=routes_path)
    plus = np.asarray(plot.vector(f"v({entry['plus']})"), dtype=float)
    minus = np.asarray(plot.vector(f"v({entry['minus']})"), dtype=float)
    return np.asarray(plot.scale, dtype=float), plus - minus, entry


def _loop_vector(graph: CopperGraph, pn: ProbeNodes) -> np.ndarray:
    v = np.zeros(len(graph.segments))
    v[list(pn.tip_segments)] = 1.0
    v[list(pn.ground_segments)] = -1.0
    return v


def _lead_length(graph: CopperGraph, segs: Sequence[int]) -> float:
    return float(sum(graph.segments[s].length for s in segs))


def probe_report(graph: CopperGraph, inductance: InductanceOperator, R: np.ndarray,
                 names: dict[int, str], results: Sequence[LoopResult],
                 frequency: float | None) -> list[dict[str, Any]]:
    """The report's ``probes`` entries (SI units): the reading's node pair
    (``plus``, ``minus``), the contacts' nets, the instrument, the leads'
    lengths, their loop inductance and its resonance with the instrument's
    capacitance, and per ``[[loop]]`` the mutual inductance ``M`` with the
    leads (module docstring), the pick-up per ampere of loop current at the
    loop's frequency (``omega |M|``; ``frequency``, the run's, for a loop without
    one; null when neither is known) and ``|M| / L_loop``.

    One function for both ways of holding the partial inductance (H):
    ``inductance`` is the dense matrix wrapped as
    :class:`parasite.extract.operator.DenseInductance` (``augment``, ``report``) or
    the operator :class:`parasite.extract.operator.FastInductance` (``report
    --inductance fast``). ``R`` (ohm) per segment; ``results``: the loops'
    :class:`parasite.loops.LoopResult` in the routes file's order, whose
    ``currents`` (the division of the loop report) give ``c``. The leads' loop
    inductance ``v^T L v`` is taken from the exact dense block of the leads' own
    segments; ``L v`` (for every ``M = (L v)^T c``) from one product of all the
    probes' vectors at once, never an N x N array.
    """
    pns = probe_nodes(graph)
    if not pns:
        return []
    specs = list(graph.routes.loops)
    if len(results) != len(specs):
        raise ValueError(f"{len(results)} loop results for {len(specs)} [[loop]] entries")
    n = len(graph.segments)
    V = np.stack([_loop_vector(graph, pn) for pn in pns], axis=1)  # (N, P)
    M = np.zeros((len(pns), len(specs)), dtype=complex)
    if specs:
        C = np.stack([r.segment_currents(n) for r in results], axis=1)  # (N, loops)
        LV = np.asarray(inductance.matvec(V)).reshape(n, len(pns))
        M = LV.T @ C  # M[p, l] = v_p^T L c_l (L symmetric)
    out: list[dict[str, Any]] = []
    for p, pn in enumerate(pns):
        pr, ins = pn.probe, pn.probe.instrument
        leads = np.asarray(list(pn.tip_segments) + list(pn.ground_segments), dtype=np.int64)
        v_leads = V[leads, p]
        l_leads = float(v_leads @ np.asarray(inductance.block(leads, leads)) @ v_leads)
        r_leads = float(np.asarray(R, dtype=float)[leads].sum())
        entries = []
        for k, (spec, r) in enumerate(zip(specs, results, strict=True)):
            f = spec.frequency if spec.frequency is not None else frequency
            m = complex(M[p, k])
            l_loop = r.inductance
            entries.append({
                "loop": spec.name,
                "frequency": f,
                "mutual": m.real,
                "mutual_magnitude": abs(m),
                "pickup_per_ampere": None if f is None else 2 * math.pi * f * abs(m),
                "loop_inductance": l_loop,
                "pickup_to_ring": (abs(m) / l_loop) if l_loop else None,
            })
        out.append({
            "name": pr.name,
            "plus": (None if pn.tip_end not in names
                     else reading_plus(names[pn.tip_end], ins)),
            "tip_end": names.get(pn.tip_end),
            "minus": names.get(pn.ground_end),
            "tip_net": graph.nodes[pn.tip_contact].net,
            "ground_net": graph.nodes[pn.ground_contact].net,
            "tip_contact": names.get(pn.tip_contact),
            "ground_contact": names.get(pn.ground_contact),
            "instrument": {"preset": ins.preset, "resistance": ins.resistance,
                           "capacitance": ins.capacitance, "damping": ins.damping},
            "tip_lead_length": _lead_length(graph, pn.tip_segments),
            "ground_lead_length": _lead_length(graph, pn.ground_segments),
            "lead_inductance": l_leads,
            "lead_resistance": r_leads,
            "lead_resonance": (1.0 / (2 * math.pi * math.sqrt(l_leads * ins.capacitance))
                               if l_leads > 0 else None),
            "lead_damping_ratio": (lead_damping_ratio(
                l_leads, r_leads + ins.damping, ins.capacitance, ins.resistance)
                if l_leads > 0 else None),
            "pickup": entries,
        })
    return out


def lead_damping_ratio(inductance: float, series_resistance: float, capacitance: float,
                       parallel_resistance: float) -> float:
    """Damping ratio (dimensionless) of the leads' resonance: a series
    ``inductance`` (H) and ``series_resistance`` (ohm: the leads' copper plus
    the instrument's damping resistance) driving ``capacitance`` (F) in parallel
    with ``parallel_resistance`` (ohm), the circuit between the contacts taken
    as a short. Its characteristic polynomial
    ``L C s^2 + (Rs C + L / Rp) s + (1 + Rs / Rp)`` gives
    ``zeta = (Rs C + L / Rp) / (2 sqrt(L C (1 + Rs / Rp)))``, about
    ``(Rs / 2) sqrt(C / L)`` for a large ``Rp`` (the standard second-order
    form, e.g. Nilsson & Riedel, *Electric Circuits*, ch. 8, series RLC)."""
    L, Rs, C, Rp = inductance, series_resistance, capacitance, parallel_resistance
    return (Rs * C + L / Rp) / (2.0 * math.sqrt(L * C * (1.0 + Rs / Rp)))


def format_probe_table(probes: Sequence[dict[str, Any]]) -> list[str]:
    """The text report's probe section (lines)."""
    lines: list[str] = []
    for p in probes:
        ins = p["instrument"]
        kind = ins["preset"] or "given"
        damping = ins.get("damping") or 0.0
        behind = f" behind {engineering(damping, 'ohm')} in series" if damping > 0 else ""
        lines.append(
            f"  {p['name']}: reads v({p['plus']}) - v({p['minus']}); tip on net "
            f"{p['tip_net']!r}, ground on net {p['ground_net']!r}; instrument {kind} "
            f"({engineering(ins['resistance'], 'ohm')} || {engineering(ins['capacitance'], 'F')}"
            f"{behind})")
        zeta = p.get("lead_damping_ratio")
        lines.append(
            f"    leads: tip {1e3 * p['tip_lead_length']:.1f} mm, ground "
            f"{1e3 * p['ground_lead_length']:.1f} mm; their loop "
            f"{engineering(p['lead_inductance'], 'H')}, resonating with the input capacitance at "
            f"{engineering(p['lead_resonance'], 'Hz') if p['lead_resonance'] else 'no frequency'}"
            + ("" if zeta is None else f", damping ratio {zeta:.2g}"))
        for e in p["pickup"]:
            if e["pickup_per_ampere"] is None:
                at = "no frequency given for this loop, so no EMF"
            else:
                at = (f"adds {engineering(e['pickup_per_ampere'], 'V')} per A of loop current "
                      f"at {engineering(e['frequency'], 'Hz')}")
            ratio = ("" if e["pickup_to_ring"] is None else
                     f"; pick-up {100 * e['pickup_to_ring']:.1f}% of the loop's ringing voltage")
            lines.append(f"    loop {e['loop']!r}: M = {engineering(e['mutual'], 'H')}; {at}{ratio}")
    if probes:
        lines.append(f"  {CAUTION}")
    return lines
