"""Domain objects of the routes file and the copper graph (frozen dataclasses).

Conventions, used everywhere in the project:

* SI inside: every length is in metres.
* ``x``, ``y`` lie in the board plane, ``z`` points up from the bottom face of
  the board. A layer's ``z`` is the height of its bottom face.
* Net names are stored lower-case (SPICE compares node names without case);
  ``gnd`` is stored as ``0``.
* A segment is oriented ``start`` -> ``end`` (its ``from`` -> ``to``): a trace
  segment in the order of the polyline's points, a via from its ``from`` layer
  toward its ``to`` layer. Positive current flows from ``start`` to ``end``;
  this fixes the sign of every mutual term.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

Unit = Literal["m", "mm", "um", "mil", "in"]
UNIT_SCALE: dict[str, float] = {"m": 1.0, "mm": 1e-3, "um": 1e-6, "mil": 25.4e-6, "in": 0.0254}

SegmentKind = Literal["trace", "via", "probe", "cell"]

Point2 = tuple[float, float]
Point3 = tuple[float, float, float]


@dataclass(frozen=True)
class Copper:
    """Conductor properties. Default: annealed copper, IEC 60028 (1925):
    1/58 ohm*mm^2/m = 1.7241e-8 ohm*m at 20 degC, 0.00393 /K."""

    resistivity: float = 1.7241e-8  # ohm*m at reference_temperature
    temperature_coefficient: float = 0.00393  # 1/K
    reference_temperature: float = 20.0  # degC
    temperature: float = 20.0  # degC

    @property
    def resistivity_at_temperature(self) -> float:
        """rho(T) = rho_ref * (1 + alpha * (T - T_ref)), ohm*m (linear model)."""
        return self.resistivity * (
            1.0 + self.temperature_coefficient * (self.temperature - self.reference_temperature)
        )


@dataclass(frozen=True)
class Layer:
    name: str
    z: float  # m, bottom face
    thickness: float  # m
    plane: str | None = None  # net of a solid return plane, else None
    line: int | None = None

    @property
    def top(self) -> float:
        return self.z + self.thickness

    @property
    def mid(self) -> float:
        return self.z + 0.5 * self.thickness


@dataclass(frozen=True)
class Trace:
    net: str
    layer: str
    width: float  # m
    points: tuple[Point2, ...]  # m
    name: str | None
    index: int  # 0-based position among [[trace]] entries
    line: int | None = None


@dataclass(frozen=True)
class Via:
    net: str
    at: Point2
    from_layer: str
    to_layer: str
    diameter: float  # m, outer diameter of the barrel
    wall: float | None  # m, plating thickness; None = solid barrel
    index: int
    line: int | None = None


@dataclass(frozen=True)
class Pin:
    terminal: str  # as written, e.g. "M1:d"
    element: str  # lower-case element name, e.g. "m1"
    term: str  # lower-case terminal name or 1-based position as text
    at: Point2
    layer: str
    index: int
    line: int | None = None


@dataclass(frozen=True)
class LoopSpec:
    name: str
    path: tuple[str, ...]  # terminals as written, e.g. ("C5:1", "M1:d")
    limit: float | None  # H
    frequency: float | None  # Hz
    index: int
    line: int | None = None
    mutual: tuple[MutualLimit, ...] = ()  # limits on the mutual with other loops
    didt: float | None = None  # A/s, this loop's current slope as an aggressor


@dataclass(frozen=True)
class MutualLimit:
    """A budget on the mutual inductance between the loop that holds it and
    another ``[[loop]]`` (``|M| <= limit``)."""

    loop: str  # the other loop's name
    limit: float  # H
    index: int  # position in the loop's ``mutual`` array


@dataclass(frozen=True)
class PartInductance:
    """A part's own series inductance at one of its terminals (``[[part]]``):
    a capacitor's ESL, a package's lead inductance, a connector pin."""

    terminal: str  # as written, e.g. "C5:1"
    element: str  # lower-case
    term: str  # lower-case
    inductance: float  # H
    index: int
    line: int | None = None


@dataclass(frozen=True)
class NetOptions:
    anchor: str | None = None  # terminal as written, e.g. "M1:d"
    line: int | None = None


@dataclass(frozen=True)
class Instrument:
    """The input of the instrument at the end of a probe's leads: a resistance
    in parallel with a capacitance, between the tip lead's end and the ground
    lead's end (see :data:`INSTRUMENT_PRESETS`), optionally behind a series
    ``damping`` resistance (from the tip lead's end to the R || C): the loss of
    a real probe's tip network and cable, which damps the resonance of the
    leads' inductance with the input capacitance. The reading is the voltage
    across the whole input, damping resistance included."""

    resistance: float  # ohm
    capacitance: float  # F
    preset: str | None = None  # the preset's name, None when given as values
    damping: float = 0.0  # ohm, series resistance in front of R || C; 0 = none


INSTRUMENT_PRESETS: dict[str, Instrument] = {
    # Passive 10:1 probe on a 1 Mohm oscilloscope input, seen at the tip: 9 Mohm
    # in the probe plus the 1 Mohm input make 10 Mohm; the tip capacitance of such
    # probes lies around 8-15 pF. Common practice, values from memory (probe data
    # sheets): check the probe at hand.
    "10x": Instrument(resistance=10e6, capacitance=12e-12, preset="10x"),
    # Passive 1:1 probe: the 1 Mohm oscilloscope input with its own ~15 pF plus
    # the cable's capacitance, about 50-110 pF in all. Common practice, from memory.
    "1x": Instrument(resistance=1e6, capacitance=80e-12, preset="1x"),
}
"""Instrument presets of the routes file's ``[[probe]] instrument`` key. A
ground spring is not an instrument: it is a short ground lead (a few mm of wire
from the ground contact to the probe's barrel), written as ``ground_lead``."""


@dataclass(frozen=True)
class ProbeContact:
    """Where a probe lead touches copper: a point on a layer (on the layer's
    top face). ``net`` (optional) is the net the copper there must belong to."""

    layer: str
    at: Point2  # m
    net: str | None = None


@dataclass(frozen=True)
class ProbeLead:
    """A probe lead: a round wire along a polyline in space, from its contact
    point on the copper to the instrument's input."""

    points: tuple[Point3, ...]  # m; points[0] is the contact point
    radius: float  # m


@dataclass(frozen=True)
class Probe:
    """A ``[[probe]]`` entry: two leads and the instrument input between their
    ends. The reading is V(tip lead's end) - V(ground lead's end)."""

    name: str
    tip: ProbeContact
    ground: ProbeContact
    tip_lead: ProbeLead
    ground_lead: ProbeLead
    instrument: Instrument
    index: int
    line: int | None = None


@dataclass(frozen=True)
class Routes:
    """The routes file, validated, in SI units."""

    path: str
    units: Unit
    snap: float  # m
    copper: Copper
    layers: dict[str, Layer]  # by name, in file order
    traces: tuple[Trace, ...]
    vias: tuple[Via, ...]
    pins: tuple[Pin, ...]
    loops: tuple[LoopSpec, ...]
    nets: dict[str, NetOptions]
    probes: tuple[Probe, ...] = ()
    pours: tuple[Any, ...] = ()  # geometry.pour.Pour, in file order
    parts: tuple[PartInductance, ...] = ()
    warnings: tuple[str, ...] = ()  # unit traps noticed while reading (geometry.traps)


@dataclass(frozen=True)
class Node:
    """A point of the copper graph where segments, pins or planes meet."""

    id: int
    net: str
    point: Point3  # m
    layer: str | None  # None for points in space (probe leads)
    plane: bool = False  # True: the net's ideal return plane (one node per plane net)


@dataclass(frozen=True)
class Plane:
    """A solid, ideal return plane (an image plane for the method of images)."""

    net: str
    layer: str
    z_bottom: float  # m, lower face
    z_top: float  # m, upper face
    node: int  # graph node id of the plane


@dataclass(frozen=True)
class Segment:
    """One straight piece of copper, oriented start -> end.

    Bars (``trace``, and ``cell``: the current cells of a meshed pour) have a
    rectangular section ``width`` x ``thickness``, centred on the centre line,
    the width lying in the board plane. Round conductors (``via`` barrels and
    ``probe`` leads) have an outer ``radius`` and an ``inner_radius`` (0 for a solid conductor).
    """

    index: int  # position in CopperGraph.segments
    id: str  # "<net>.<n>", n counting from 1 per net in order of appearance
    net: str
    kind: SegmentKind
    layer: str | None  # trace: its layer; via: "from-to" layer names; probe: None
    start: Point3  # m
    end: Point3  # m
    width: float  # m (bars; 2*radius for round conductors)
    thickness: float  # m (bars; 2*radius for round conductors)
    radius: float  # m (round conductors; 0 for bars)
    inner_radius: float  # m (round conductors; 0 for solid and for bars)
    node_from: int
    node_to: int
    source: str  # key path of the entry it comes from, e.g. "trace[2]" (0-based like the file's order)
    name: str | None = None  # the entry's name, for reports

    @property
    def length(self) -> float:
        return float(np.linalg.norm(np.subtract(self.end, self.start)))

    @property
    def round(self) -> bool:
        return self.kind in ("via", "probe")


@dataclass(frozen=True)
class SegmentArrays:
    """All segments at once, for the vectorised physics (N segments).

    ``mirror_z`` is the height (m) of the image plane's face that each segment
    is mirrored in (the nearest plane's face toward the segment), NaN where no
    plane applies.
    """

    start: np.ndarray  # (N, 3) m
    end: np.ndarray  # (N, 3) m
    width: np.ndarray  # (N,) m
    thickness: np.ndarray  # (N,) m
    round: np.ndarray  # (N,) bool: True for round conductors (vias, probe leads)
    radius: np.ndarray  # (N,) m, 0 for bars
    inner_radius: np.ndarray  # (N,) m, 0 for solid
    net_index: np.ndarray  # (N,) int, index into CopperGraph.nets
    node_from: np.ndarray  # (N,) int
    node_to: np.ndarray  # (N,) int
    mirror_z: np.ndarray  # (N,) m or NaN

    def __len__(self) -> int:
        return int(self.start.shape[0])

    @property
    def length(self) -> np.ndarray:
        return np.linalg.norm(self.end - self.start, axis=1)


@dataclass(frozen=True)
class PinNode:
    pin: Pin
    net: str
    node: int


@dataclass(frozen=True)
class CopperGraph:
    """Copper as straight segments joined at nodes, per net, in file order."""

    routes: Routes
    nets: tuple[str, ...]  # nets that have copper, in order of appearance
    nodes: tuple[Node, ...]
    segments: tuple[Segment, ...]
    arrays: SegmentArrays
    pins: tuple[PinNode, ...]  # in file order
    anchors: dict[str, int]  # net -> node id that keeps the net's original name
    planes: tuple[Plane, ...]
    warnings: tuple[str, ...] = field(default=())


def canonical_net(name: str) -> str:
    """A net name as stored: lower-case (SPICE compares node names without
    case), with ``gnd`` stored as ``0``."""
    low = name.strip().lower()
    return "0" if low == "gnd" else low
