"""The loop inductance and resistance that a measured ring implies.

A switch-node ring is modelled as a series RLC loop: the loop's inductance L
and resistance R with the capacitance C that rings with them (the output
capacitance of the switch that blocks after the edge). Its free response has

    alpha = R / (2 L),   omega_0 = 1 / sqrt(L C),   omega_d = sqrt(omega_0^2 - alpha^2),
    zeta = alpha / omega_0 = (R / 2) sqrt(C / L)

(J. W. Nilsson, S. A. Riedel, *Electric Circuits*, chapter "Natural and step
responses of RLC circuits", series RLC -- cited from memory; a standard
result). Given the ring's f_d and zeta and the capacitance C:

    omega_0 = 2 pi f_d / sqrt(1 - zeta^2),   L = 1 / (omega_0^2 C),
    R = 2 zeta omega_0 L.

The capacitance of a device is read from its model by ngspice itself (a
small-signal AC analysis of the device alone, biased at the voltage it blocks
after the edge, gate tied to source): C = Im(Y) / omega at 1 MHz. These are
estimates: a switch's capacitance varies with voltage, so the ring is not
exactly linear, and the loop's resistance at the ring frequency includes skin
and proximity effects and the switch's on-resistance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from parasite.errors import MeasurementError, SimulationError


@dataclass(frozen=True)
class LoopFit:
    """Series RLC loop equivalent to a ring: ``inductance`` H, ``resistance``
    ohm, from ``frequency`` Hz (damped) and ``damping_ratio`` with
    ``capacitance`` F."""

    frequency: float
    damping_ratio: float
    capacitance: float
    inductance: float
    resistance: float

    @property
    def natural_frequency(self) -> float:
        """f_0 = 1 / (2 pi sqrt(L C)), Hz."""
        return 1.0 / (2 * math.pi * math.sqrt(self.inductance * self.capacitance))

    def to_dict(self) -> dict[str, Any]:
        return {
            "frequency": self.frequency,
            "damping_ratio": self.damping_ratio,
            "capacitance": self.capacitance,
            "inductance": self.inductance,
            "resistance": self.resistance,
        }


def series_rlc_from_ring(frequency: float, damping_ratio: float, capacitance: float) -> LoopFit:
    """L and R of the series RLC loop that rings at ``frequency`` (Hz, damped)
    with ``damping_ratio``, given ``capacitance`` (F). See the module notes."""
    if not (frequency > 0 and math.isfinite(frequency)):
        raise ValueError(f"ring frequency must be positive, got {frequency!r}")
    if not (0 <= damping_ratio < 1):
        raise ValueError(f"damping ratio must be in [0, 1) for a ring, got {damping_ratio!r}")
    if not (capacitance > 0 and math.isfinite(capacitance)):
        raise ValueError(f"capacitance must be positive, got {capacitance!r}")
    w0 = 2 * math.pi * frequency / math.sqrt(1 - damping_ratio**2)
    inductance = 1.0 / (w0 * w0 * capacitance)
    resistance = 2 * damping_ratio * w0 * inductance
    return LoopFit(frequency, damping_ratio, capacitance, inductance, resistance)


def damped_frequency(inductance: float, resistance: float, capacitance: float) -> float:
    """f_d = sqrt(1/(L C) - (R / 2L)^2) / (2 pi) of a series RLC loop, Hz
    (Nilsson & Riedel, as in the module notes). Raises ``ValueError`` when the
    loop does not ring (overdamped)."""
    w2 = 1.0 / (inductance * capacitance) - (resistance / (2 * inductance)) ** 2
    if w2 <= 0:
        raise ValueError("the loop is critically damped or overdamped: it does not ring")
    return math.sqrt(w2) / (2 * math.pi)


# -- capacitance of a device from its model ------------------------------------------------------

_MOS_TYPES = {"vdmos", "nmos", "pmos"}
_DIODE_TYPES = {"d"}


def _model_card(model: Any) -> str:
    parts = [f".model {model.name} {model.type}"]
    flags = []
    params = []
    for key, value in model.params.items():
        if value == "":
            flags.append(key)
        else:
            params.append(f"{key}={value}")
    return " ".join(parts + flags + params)


def device_capacitance(
    model: Any,
    voltage: float,
    *,
    device: str = "device",
    netlist: str = "<netlist>",
    frequency: float = 1e6,
    timeout: float = 60.0,
) -> float:
    """Small-signal output capacitance (F) of a MOSFET (drain to source, gate
    tied to source) or the junction capacitance of a diode (reverse biased),
    biased at ``voltage`` (V, the magnitude it blocks), as ngspice computes it
    from ``model`` (a :class:`parasite.netlist.Model`).

    ngspice runs an AC analysis of the device alone at ``frequency`` and
    C = -Im(i(vd)) / (2 pi f) for a 1 V drive. Raises
    :class:`~parasite.errors.MeasurementError` for a model type it cannot
    handle (then give the capacitance by hand).
    """
    from parasite.spice import run_ngspice

    mtype = model.type.lower()
    pchan = any(k.lower() == "pchan" for k in model.params) or mtype == "pmos"
    v = abs(voltage)
    if mtype in _MOS_TYPES:
        # VDMOS has three terminals (d g s); the MOS levels four (d g s b).
        nodes = "d 0 0" if mtype == "vdmos" else "d 0 0 0"
        bias = -v if pchan else v
        element = f"M1 {nodes} {model.name}"
    elif mtype in _DIODE_TYPES:
        bias = v
        element = f"D1 0 d {model.name}"
    else:
        raise MeasurementError(
            f"cannot take a capacitance from the model {model.name!r} of type {model.type!r} "
            f"(of {device}); give the ring capacitance with --capacitance",
            file=netlist,
        )
    deck = "\n".join(
        [
            f"capacitance of {device} at {v:g} V",
            f"VD d 0 DC {bias:.6e} AC 1",
            element,
            _model_card(model),
            f".ac lin 1 {frequency:.6e} {frequency:.6e}",
            ".end",
            "",
        ]
    )
    try:
        result = run_ngspice(deck, timeout=timeout, name=f"{netlist} (capacitance of {device})")
    except SimulationError as exc:
        raise MeasurementError(
            f"ngspice could not evaluate the capacitance of {device} (model {model.name}): "
            f"{exc.message}; give the ring capacitance with --capacitance",
            file=netlist,
        ) from exc
    i = complex(np.asarray(result.vector("i(vd)"))[0])
    c = -i.imag / (2 * math.pi * frequency)
    if not (c > 0 and math.isfinite(c)):
        raise MeasurementError(
            f"the model {model.name} of {device} gives no positive capacitance at {v:g} V "
            f"({c:.3g} F); give the ring capacitance with --capacitance",
            file=netlist,
        )
    return c


@dataclass(frozen=True)
class DeviceCapacitance:
    """One switch's share of the ring capacitance: its model, the voltage it
    blocks after the edge (V) and its capacitance there (F)."""

    device: str
    model: str
    voltage: float
    capacitance: float


def ring_capacitance(
    netlist: Any,
    node: str,
    voltages: dict[str, float],
    step: float,
) -> list[DeviceCapacitance]:
    """The devices whose capacitance rings with the loop after an edge at
    ``node``, and their capacitance.

    Candidates are the MOSFETs (drain or source on ``node``) and diodes (either
    end on ``node``) with a ``.model``, at top level and inside subcircuit
    instances (:mod:`parasite.ring.devices`). Of these,
    the ones that block at least half the step after the edge (read from
    ``voltages``: node name -> volts, from the simulation, ground is 0) ring
    with the loop; a device that conducts is shorted by its channel. Each
    capacitance is evaluated by ngspice at the voltage the device blocks
    (:func:`device_capacitance`). Raises
    :class:`~parasite.errors.MeasurementError` when no device qualifies.
    """
    from parasite.ring.devices import devices

    node = node.lower()
    models = netlist.models
    found: list[DeviceCapacitance] = []
    seen: list[str] = []
    for el in devices(netlist):
        if el.model is None or el.model not in models:
            continue
        if el.letter == "M":
            if len(el.nodes) < 3:
                continue
            a, b = el.nodes[0], el.nodes[2]
        else:
            a, b = el.nodes[0], el.nodes[1]
        if node not in (a, b):
            continue
        seen.append(el.name)
        va, vb = _node_voltage(voltages, a), _node_voltage(voltages, b)
        if va is None or vb is None:
            missing = a if va is None else b
            raise MeasurementError(
                f"the simulation did not save the voltage of node {missing!r} (a terminal of "
                f"{el.name}), needed to tell whether it blocks; save it, or give the ring "
                "capacitance with --capacitance",
                file=el.file,
                line=el.line,
            )
        blocked = abs(va - vb)
        if blocked < 0.5 * abs(step):
            continue
        model = models[el.model]
        c = device_capacitance(model, blocked, device=el.name, netlist=netlist.path)
        found.append(DeviceCapacitance(el.name, model.name, blocked, c))
    if not found:
        what = ", ".join(seen) if seen else "none with a .model card"
        raise MeasurementError(
            f"no switch on node {node!r} blocks the step after the edge (devices on it: {what}); "
            "give the ring capacitance with --capacitance",
            file=netlist.path,
        )
    return found


def _node_voltage(voltages: dict[str, float], node: str) -> float | None:
    if node in ("0", "gnd"):
        return 0.0
    return voltages.get(node)
