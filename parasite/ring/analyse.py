"""``parasite ring`` as a library call: simulate the netlist without and with
the extracted copper, measure the ring of each edge at a node, line measured
edges up with simulated ones, and turn the measured ring into a loop L and R.

Nothing here prints. Errors are :class:`~parasite.errors.ParasiteError`
subclasses that name the file (ngspice's own messages are quoted).
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from parasite.errors import MeasurementError, SimulationError
from parasite.ring.fit import DeviceCapacitance, LoopFit, ring_capacitance, series_rlc_from_ring
from parasite.ring.metrics import DEFAULT_BAND, RingMetrics, ring_metrics
from parasite.ring.pairing import pair_edges
from parasite.ring.points import augmented_point, resolve_node, with_save

__all__ = ["analyse_ring", "pair_edges", "resolve_node", "with_save"]

FORMAT = "parasite-ring/1"

CAUTIONS = [
    "Probing a live power stage is hazardous: high voltage, stored energy and large "
    "currents. Follow local codes and licensed practice, and leave the measurement "
    "to people trained and equipped for it.",
    "The numbers are estimates from a simplified model (closed-form copper "
    "inductance, a series RLC reading of the ring); confirm them by measurement.",
]


@dataclass
class Waveform:
    """A waveform for plotting: ``time`` in s, ``value`` in V, ``label``."""

    label: str
    time: np.ndarray
    value: np.ndarray
    shift: float = 0.0  # s added to ``time`` to align it with the simulations


@dataclass
class RingResult:
    """The report (``report``: plain JSON-ready data) and the waveforms."""

    report: dict[str, Any]
    ideal: Waveform
    augmented: Waveform | None
    measured: Waveform | None
    metrics: dict[str, list[RingMetrics]] = field(default_factory=dict)
    pairs: list[tuple[int, int | None, int | None]] = field(default_factory=list)
    """(measured edge, ideal edge, augmented edge) indices (0-based) compared."""


def tran_stop(deck: bytes) -> float | None:
    """The stop time (s) of the deck's first ``.tran`` card, if it has one."""
    from parasite.units import parse_spice_number

    for raw in deck.decode("latin-1").splitlines():
        m = re.match(r"^\s*\.tran\s+(\S+)\s+(\S+)", raw, re.IGNORECASE)
        if m:
            try:
                return parse_spice_number(m.group(2))
            except ValueError:
                return None
    return None


def _node_wave(result: Any, node: str, name: str) -> tuple[np.ndarray, np.ndarray]:
    plot = None
    for p in reversed(result.plots):
        if "transient" in p.name.lower():
            plot = p
            break
    if plot is None:
        raise SimulationError(
            "ngspice ran no transient analysis; the netlist needs a .tran card", file=name
        )
    key = plot.find(node)
    if key is None:
        saved = ", ".join(k for k in plot.vectors if k != plot.scale_name)
        raise SimulationError(
            f"node {node!r} is not in the simulation's output (saved: {saved}); add it to "
            "the .save card, or remove .save to save every node",
            file=name,
        )
    return np.asarray(plot.scale, dtype=float), np.asarray(plot.vectors[key], dtype=float).real


def _voltages_at(result: Any, time: float) -> dict[str, float]:
    """Every saved node voltage at ``time`` (s), keyed by node name."""
    plot = next(p for p in reversed(result.plots) if "transient" in p.name.lower())
    t = plot.scale
    out: dict[str, float] = {}
    for key, vec in plot.vectors.items():
        m = re.fullmatch(r"v\((.+)\)", key)
        node = m.group(1) if m else (key if not key.startswith("i(") and "#" not in key else None)
        if node is None or key == plot.scale_name:
            continue
        out[node] = float(np.interp(time, t, np.asarray(vec, dtype=float).real))
    return out


def _last(edges: list[RingMetrics], direction: int) -> RingMetrics | None:
    same = [m for m in edges if m.direction == direction]
    return same[-1] if same else None


def _plateau_time(edges: list[RingMetrics], ref: RingMetrics, t_end: float) -> float:
    later = [m.edge_time for m in edges if m.edge_time > ref.edge_time]
    nxt = later[0] if later else t_end
    return ref.edge_time + 0.7 * (nxt - ref.edge_time)


def _pick_loop(loops: list[dict[str, Any]], name: str | None, where: str) -> dict[str, Any] | None:
    if not loops:
        if name is not None:
            raise MeasurementError(f"the routes file defines no loops; there is no {name!r}",
                                   file=where)
        return None
    if name is None:
        return loops[0]
    for lp in loops:
        if str(lp.get("name", "")).lower() == name.lower():
            return lp
    raise MeasurementError(
        f"no loop named {name!r}; the routes file defines: "
        + ", ".join(repr(lp.get("name")) for lp in loops),
        file=where,
    )


def analyse_ring(
    netlist_path: str,
    routes_path: str | None,
    node: str,
    *,
    measured_path: str | None = None,
    time_unit: str | None = None,
    channel: str | None = None,
    band: float = DEFAULT_BAND,
    capacitance: float | None = None,
    loop: str | None = None,
    min_coupling: float | None = None,
    frequency: float | None = None,
    timeout: float = 600.0,
    progress: Callable[[str, float], None] | None = None,
    probe: str | None = None,
    edge_rule: str | int = "order",
    broadband: bool = False,
) -> RingResult:
    """Simulate NETLIST as it is and with the copper of ROUTES (``routes_path``
    None: the original only), measure the ring at ``node``, and compare with a
    measured waveform and fit a loop to it when ``measured_path`` is given
    (``time_unit``: the unit of its time column when the file does not say it).

    ``progress(stage, simulated_time)`` is called during long simulations.
    ``capacitance`` (F) overrides the ring capacitance taken from the
    netlist's device models; ``loop`` names the routes file's loop to compare
    the fitted inductance with (default: its first loop). ``probe`` names a
    ``[[probe]]`` of the routes file whose reading (the voltage across its
    instrument input) is the augmented simulation's waveform instead of the
    node's voltage. ``edge_rule`` says which simulated edge each measured
    edge is compared with (:func:`pair_edges`).
    """
    from parasite.netlist import read_netlist
    from parasite.spice import run_ngspice

    if netlist_path == "-":
        raise MeasurementError(
            "ring simulates the netlist from its folder (for its includes): give a file, "
            "not standard input",
            file="<stdin>",
        )
    path = Path(netlist_path)
    try:
        deck = path.read_bytes()
    except OSError as exc:
        raise SimulationError(f"cannot read the netlist: {exc.strerror}", file=netlist_path) from exc
    netlist = read_netlist(netlist_path)
    base_dir = path.parent if str(path.parent) else Path(".")
    if tran_stop(deck) is None:
        raise SimulationError(
            "the netlist has no .tran card; ring needs a transient analysis that shows "
            "switching edges at the node",
            file=netlist_path,
        )
    node_key, terminal = resolve_node(netlist, node)
    trace = None
    if measured_path is not None:  # read it first: a bad file fails before the simulations
        from parasite.ring.scope_csv import read_scope_csv

        trace = read_scope_csv(measured_path, time_unit=time_unit)
        label, values = trace.channel(channel)
        if trace.units.get(label) != "V":
            raise MeasurementError(
                f"channel {label!r} is in {trace.units.get(label)}; ring compares voltages",
                file=measured_path,
            )

    def stage(label: str) -> Callable[[float], None] | None:
        if progress is None:
            return None
        return lambda t: progress(label, t)

    ideal_name = f"{netlist_path} (as written)"
    ideal_res = run_ngspice(deck, base_dir=base_dir, timeout=timeout, name=netlist_path,
                            progress=stage("simulating the netlist as written"))
    t_i, v_i = _node_wave(ideal_res, node_key, netlist_path)
    ideal_edges = ring_metrics(t_i, v_i, band=band, name=f"{ideal_name}, node {node_key}")
    report: dict[str, Any] = {
        "format": FORMAT,
        "netlist": netlist_path,
        "routes": routes_path,
        "node": node_key,
        "terminal": None if terminal is None else f"{terminal[0]}:{terminal[1]}",
        "read_at": (f"terminal {terminal[1]} of {terminal[0]} (node {node_key})"
                    if terminal is not None else f"node {node_key}"),
        "settling_band_fraction": band,
        "simulations": {"ideal": {"edges": [m.to_dict() for m in ideal_edges],
                                  "warnings": ideal_res.warnings}},
        "measured": None,
        "comparison": [],
        "fit": [],
        "loop": None,
        "cautions": CAUTIONS,
        "warnings": [],
    }
    metrics = {"ideal": ideal_edges}
    augmented_wave: Waveform | None = None
    aug_edges: list[RingMetrics] = []
    loop_info: dict[str, Any] | None = None
    if routes_path is not None:
        from parasite.augment import augment_files

        wide = None
        if broadband:
            from parasite.network.ladders import BroadbandOptions

            wide = BroadbandOptions()
        aug = augment_files(netlist_path, routes_path, min_coupling=min_coupling,
                            frequency=frequency, broadband=wide)
        report["copper_model"] = ("broadband R-L ladders" if broadband else
                                  "DC resistance" if frequency is None else f"R at {frequency:g} Hz")
        aug_name = f"{netlist_path} (augmented with {routes_path})"
        aug_node, read_at = augmented_point(netlist, aug.netlist_bytes, node_key, terminal,
                                             base_dir)
        aug_deck = aug.netlist_bytes if probe is not None else with_save(aug.netlist_bytes,
                                                                          aug_node)
        if len(aug.report.get("loops", [])) > 1:  # the loops' currents, for the pick-up
            from parasite.field.sim_pickup import save_loop_currents

            aug_deck = save_loop_currents(aug_deck, aug)
        aug_res = run_ngspice(aug_deck, base_dir=base_dir, timeout=timeout,
                              name=aug_name, progress=stage("simulating the augmented netlist"))
        if probe is not None:
            from parasite.probes import probe_reading

            t_a, v_a, probe_entry = probe_reading(aug_res, aug.report, probe, routes_path)
            report["probe"] = {k: probe_entry[k] for k in ("name", "plus", "minus")}
        else:
            t_a, v_a = _node_wave(aug_res, aug_node, aug_name)
            report["read_at"] = read_at
        aug_edges = ring_metrics(t_a, v_a, band=band, name=f"{aug_name}, node {aug_node}")
        report["simulations"]["augmented"] = {
            "edges": [m.to_dict() for m in aug_edges],
            "warnings": aug_res.warnings,
        }
        metrics["augmented"] = aug_edges
        augmented_wave = Waveform("augmented" if probe is None else f"probe {probe}", t_a, v_a)
        loop_info = _pick_loop(list(aug.report.get("loops", [])), loop, routes_path)
        if loop_info is not None:
            report["loop"] = {k: loop_info.get(k) for k in ("name", "inductance", "resistance")}
        if loop_info is not None and len(aug.report.get("loops", [])) > 1:
            from parasite.field.sim_pickup import simulated_pickup  # other loops as victims

            report["pickup"] = simulated_pickup(aug, aug_res, str(loop_info["name"]))
    ideal_wave = Waveform("ideal", t_i, v_i)

    # The ring capacitance for each direction: given, or from the blocking switch.
    cap_cache: dict[int, tuple[float, list[DeviceCapacitance]]] = {}

    def ring_c(direction: int) -> tuple[float, list[DeviceCapacitance]]:
        if direction in cap_cache:
            return cap_cache[direction]
        if capacitance is not None:
            cap_cache[direction] = (capacitance, [])
            return cap_cache[direction]
        ref = _last(ideal_edges, direction)
        if ref is None:
            raise MeasurementError(
                f"the simulation has no {'rising' if direction > 0 else 'falling'} edge at "
                f"node {node_key!r} to take the blocking voltages from; give the ring "
                "capacitance with --capacitance",
                file=netlist_path,
            )
        volts = _voltages_at(ideal_res, _plateau_time(ideal_edges, ref, float(t_i[-1])))
        devices = ring_capacitance(netlist, node_key, volts, ref.step)
        cap_cache[direction] = (sum(d.capacitance for d in devices), devices)
        return cap_cache[direction]

    def fit_entry(source: str, m: RingMetrics) -> dict[str, Any] | None:
        if m.frequency is None or m.damping_ratio is None or m.damping_ratio >= 1:
            return None
        c, devices = ring_c(m.direction)
        fit: LoopFit = series_rlc_from_ring(m.frequency, m.damping_ratio, c)
        entry: dict[str, Any] = {
            "source": source,
            "direction": m.kind,
            "edge_time": m.edge_time,
            **fit.to_dict(),
            "capacitance_from": (
                "given" if not devices else
                [{"device": d.device, "model": d.model, "voltage": d.voltage,
                  "capacitance": d.capacitance} for d in devices]
            ),
            "loop_inductance": None,
            "inductance_difference": None,
        }
        if loop_info is not None and loop_info.get("inductance"):
            lref = float(loop_info["inductance"])
            entry["loop_inductance"] = lref
            entry["inductance_difference"] = (fit.inductance - lref) / lref
        return entry

    measured_wave: Waveform | None = None
    pairs: list[tuple[int, int | None, int | None]] = []
    if measured_path is not None and trace is not None:
        meas_edges = ring_metrics(trace.time, values, band=band,
                                  name=f"{measured_path}, channel {label}")
        metrics["measured"] = meas_edges
        report["measured"] = {
            "file": measured_path,
            "channel": label,
            "channels": list(trace.channels),
            "edges": [m.to_dict() for m in meas_edges],
            "warnings": trace.warnings,
        }
        report["warnings"].extend(f"{measured_path}: {w}" for w in trace.warnings)
        shift: float | None = None
        pair_i = pair_edges(meas_edges, ideal_edges, edge_rule)
        pair_a = pair_edges(meas_edges, aug_edges, edge_rule)
        report["pairing"] = edge_rule if isinstance(edge_rule, str) else f"from edge {edge_rule}"
        for i, m in enumerate(meas_edges):
            ji, ja = pair_i[i], pair_a[i]
            ref_ideal = None if ji is None else ideal_edges[ji]
            ref_aug = None if ja is None else aug_edges[ja]
            ref = ref_aug if ref_aug is not None else ref_ideal
            offset = None if ref is None else ref.edge_time - m.edge_time
            if shift is None and offset is not None:
                shift = offset
            comp = _compare(i, m, ref_ideal, ref_aug, offset)
            comp["ideal_edge"] = None if ji is None else ji + 1
            comp["augmented_edge"] = None if ja is None else ja + 1
            report["comparison"].append(comp)
            pairs.append((i, ji, ja))
            entry = fit_entry(f"measured edge {i + 1}", m)
            if entry is not None:
                report["fit"].append(entry)
        measured_wave = Waveform(f"{Path(measured_path).name}, column {label}", trace.time, values,
                                 shift=0.0 if shift is None else shift)
    for direction in (1, -1):
        last = _last(aug_edges, direction)
        if last is None or measured_path is None:
            continue
        try:
            entry = fit_entry("augmented simulation", last)
        except MeasurementError as exc:
            report["warnings"].append(str(exc))
            entry = None
        if entry is not None:
            report["fit"].append(entry)
    from parasite.ring.budget import damping_budget

    report["damping_budget"] = damping_budget(report["fit"])
    return RingResult(report=report, ideal=ideal_wave, augmented=augmented_wave,
                      measured=measured_wave, metrics=metrics, pairs=pairs)


METRIC_KEYS = ("frequency", "damping_ratio", "overshoot", "overshoot_ratio", "settling_time",
               "ring_amplitude", "step")


def _compare(
    index: int,
    meas: RingMetrics,
    ideal: RingMetrics | None,
    aug: RingMetrics | None,
    offset: float | None,
) -> dict[str, Any]:
    rows: dict[str, dict[str, float | None]] = {}
    for key in METRIC_KEYS:
        mv = getattr(meas, key)
        iv = getattr(ideal, key) if ideal is not None else None
        av = getattr(aug, key) if aug is not None else None
        diff = None if (mv is None or av is None) else av - mv
        rel = None if (diff is None or not mv) else diff / abs(mv)
        rows[key] = {"ideal": iv, "augmented": av, "measured": mv, "difference": diff,
                     "relative_difference": rel}
    return {
        "measured_edge": index + 1,
        "direction": meas.kind,
        "measured_time": meas.edge_time,
        "ideal_time": None if ideal is None else ideal.edge_time,
        "augmented_time": None if aug is None else aug.edge_time,
        "time_offset": offset,
        "metrics": rows,
    }
