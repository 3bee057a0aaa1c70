"""Loading and validating the routes file (``shared/spec/routes-file.md``).

``load_routes(path)`` reads TOML (``*.toml``, ``*.routes.toml``) or JSON
(``*.json``, ``*.routes.json``); ``parse_routes(data, name, fmt)`` parses bytes.
Both return a :class:`geometry.model.Routes` in SI units (lengths converted
once, here) or raise :class:`geometry.errors.RoutesError`.

Validation is strict: unknown keys, wrong types, non-finite numbers,
non-positive sizes, unknown or overlapping layers, zero-length segments, a
trace on a plane layer, duplicate pins and duplicate loop names are errors.
Every message names the file, the key path, the line (found by a scan of the
text, best effort), the bad value and what would be accepted.

Key paths count entries from 0 like a JSON array index: ``trace[0]`` is the
first ``[[trace]]`` of the file, ``trace[0].points[1]`` its second point.

Each kind of ``[[entry]]`` is parsed by its own function, registered in
:data:`ENTRY_PARSERS`. ``[[probe]]`` (:func:`parse_probe_entry`): ``name``;
``tip`` and ``ground`` contacts ``{ layer, at [, net] }``; ``tip_lead`` and
``ground_lead`` ``{ points = [[x, y, z], ...], radius }`` starting at their
contact on the layer's top face; ``instrument``, ``"10x"``, ``"1x"`` or
``{ resistance, capacitance [, damping] }`` (docs/routes-file.md, "Probes").
"""

from __future__ import annotations

import json
import math
import re
import sys
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal, NoReturn

from geometry.errors import RoutesError
from geometry.locate import KeyPath, LineMap, format_path, json_lines, toml_lines
from geometry.model import (
    INSTRUMENT_PRESETS,
    UNIT_SCALE,
    Copper,
    Instrument,
    Layer,
    LoopSpec,
    NetOptions,
    Pin,
    Point2,
    Point3,
    Probe,
    ProbeContact,
    ProbeLead,
    Routes,
    Trace,
    Unit,
    Via,
    canonical_net,
)
from geometry.values import parse_spice_number

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

FORMAT = "parasite-routes/1"
DEFAULT_SNAP_M = 1e-6  # m: two points closer than this are one point (spec default)

_TOP_KEYS = ("format", "units", "snap", "copper", "layers", "nets",
             "trace", "via", "pin", "loop", "probe")
_COPPER_KEYS = ("resistivity", "temperature_coefficient", "reference_temperature", "temperature")
_LAYER_KEYS = ("z", "thickness", "plane")
_TRACE_KEYS = ("net", "layer", "width", "points", "name")
_VIA_KEYS = ("net", "at", "from", "to", "diameter", "wall")
_PIN_KEYS = ("terminal", "at", "layer")
_LOOP_KEYS = ("name", "path", "limit", "frequency")
_NET_KEYS = ("anchor",)
_NAME_FORBIDDEN = set(" \t\r\n=(),;")


@dataclass
class Context:
    """What an entry parser needs: the file, its line map, the unit scale, the
    layers, and helpers that check a value and raise a located error."""

    file: str
    lines: LineMap
    units: Unit = "m"
    scale: float = 1.0
    snap: float = DEFAULT_SNAP_M  # m
    layers: dict[str, Layer] = field(default_factory=dict)

    # -- errors ---------------------------------------------------------
    def fail(self, path: KeyPath, message: str) -> NoReturn:
        raise RoutesError(message, file=self.file, line=self.lines.line_of(path),
                          key=format_path(path) or None)

    # -- structure ------------------------------------------------------
    def table(self, value: Any, path: KeyPath, keys: Sequence[str],
              required: Sequence[str] = ()) -> dict[str, Any]:
        """Check that ``value`` is a table with only ``keys`` and all of ``required``."""
        if not isinstance(value, dict):
            self.fail(path, f"must be a table (TOML) or object (JSON) with keys "
                            f"{', '.join(keys)}; got {_describe(value)}")
        for k in value:
            if k not in keys:
                self.fail(path + (k,), f"unknown key {k!r}; accepted keys here: {', '.join(keys)}")
        for k in required:
            if k not in value:
                self.fail(path, f"missing required key {k!r} (accepted keys: {', '.join(keys)})")
        return value

    def array(self, value: Any, path: KeyPath, what: str) -> list[Any]:
        if not isinstance(value, list):
            self.fail(path, f"must be an array of {what}; got {_describe(value)}")
        return value

    # -- scalars --------------------------------------------------------
    def number(self, value: Any, path: KeyPath, what: str = "a number") -> float:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            self.fail(path, f"must be {what}; got {_describe(value)}")
        x = float(value)
        if not math.isfinite(x):
            self.fail(path, f"must be {what} (finite); got {value!r}")
        return x

    def length(self, value: Any, path: KeyPath, *, positive: bool = False,
               non_negative: bool = False) -> float:
        """A length in the file's units, returned in metres."""
        what = f"a {'positive ' if positive else ''}length in {self.units}"
        if non_negative:
            what = f"a length >= 0 in {self.units}"
        x = self.number(value, path, what)
        if positive and x <= 0:
            self.fail(path, f"must be {what}; got {_num(value)}")
        if non_negative and x < 0:
            self.fail(path, f"must be {what}; got {_num(value)}")
        return x * self.scale

    def string(self, value: Any, path: KeyPath, what: str = "a string") -> str:
        if not isinstance(value, str):
            self.fail(path, f"must be {what}; got {_describe(value)}")
        if not value.strip():
            self.fail(path, f"must be {what}, not empty")
        return value

    def net(self, value: Any, path: KeyPath) -> str:
        what = "a netlist node name (text without spaces, '=', '(', ')', ',' or ';')"
        text = self.string(value, path, what)
        if any(c in _NAME_FORBIDDEN for c in text):
            self.fail(path, f"must be {what}; got {text!r}")
        return canonical_net(text)

    def point(self, value: Any, path: KeyPath) -> Point2:
        what = f"a point [x, y] in {self.units}"
        if not isinstance(value, list) or len(value) != 2:
            self.fail(path, f"must be {what}; got {_describe(value)}")
        x = self.number(value[0], path + (0,), f"a coordinate in {self.units}") * self.scale
        y = self.number(value[1], path + (1,), f"a coordinate in {self.units}") * self.scale
        return (x, y)

    def layer(self, value: Any, path: KeyPath) -> str:
        name = self.string(value, path, "a layer name")
        if name not in self.layers:
            known = ", ".join(repr(k) for k in self.layers) or "none are defined"
            self.fail(path, f"unknown layer {name!r}; the layers are: {known}")
        return name

    def terminal(self, value: Any, path: KeyPath) -> tuple[str, str, str]:
        """``"M1:d"`` -> (as written, element lower-case, terminal lower-case)."""
        what = "a terminal 'ELEMENT:TERMINAL' such as 'M1:d' or 'R3:1'"
        text = self.string(value, path, what)
        elem, sep, term = text.strip().rpartition(":")
        if not sep or not elem.strip() or not term.strip() or any(
            c in _NAME_FORBIDDEN for c in elem.strip() + term.strip()
        ):
            self.fail(path, f"must be {what}; got {text!r}")
        return text, elem.strip().lower(), term.strip().lower()

    def display(self, metres: float) -> str:
        """A length in metres, written in the file's units for messages."""
        return f"{metres / self.scale:.6g} {self.units}"


def _describe(value: Any) -> str:
    if isinstance(value, bool):
        return f"the boolean {str(value).lower()}"
    if isinstance(value, str):
        return f"the string {value!r}"
    if isinstance(value, (int, float)):
        return f"the number {_num(value)}"
    if isinstance(value, list):
        return f"an array of {len(value)} item{'s' if len(value) != 1 else ''}"
    if isinstance(value, dict):
        return "a table"
    return f"a value of type {type(value).__name__}"


def _num(value: Any) -> str:
    return f"{value:g}" if isinstance(value, float) else str(value)


# ---------------------------------------------------------------------------
# entry parsers: one per [[kind]], registered in ENTRY_PARSERS


def _check_piece_lengths(ctx: Any, path: tuple[Any, ...], points: Sequence[Sequence[float]],
                         pts_raw: Sequence[Any]) -> None:
    """Consecutive points of a polyline at least ``snap`` apart (no zero-length piece)."""
    for k in range(1, len(points)):
        d = math.dist(points[k - 1], points[k])
        if d < ctx.snap:
            ctx.fail(path + ("points", k),
                     f"zero-length segment: point {pts_raw[k]!r} is {ctx.display(d)} from the "
                     f"previous point {pts_raw[k - 1]!r}; consecutive points must be at least "
                     f"snap = {ctx.display(ctx.snap)} apart")


def parse_trace_entry(ctx: Context, raw: Any, index: int) -> Trace:
    path: KeyPath = ("trace", index)
    t = ctx.table(raw, path, _TRACE_KEYS, ("net", "layer", "width", "points"))
    net = ctx.net(t["net"], path + ("net",))
    layer = ctx.layer(t["layer"], path + ("layer",))
    plane = ctx.layers[layer].plane
    if plane is not None:
        ctx.fail(path + ("layer",),
                 f"layer {layer!r} is a return plane (of net {plane!r}) and carries no traces; "
                 f"put the trace on a layer without 'plane'")
    width = ctx.length(t["width"], path + ("width",), positive=True)
    pts_raw = ctx.array(t["points"], path + ("points",), f"points [x, y] in {ctx.units}")
    if len(pts_raw) < 2:
        ctx.fail(path + ("points",),
                 f"must hold at least two points [x, y]; got {len(pts_raw)}")
    points = tuple(ctx.point(p, path + ("points", k)) for k, p in enumerate(pts_raw))
    _check_piece_lengths(ctx, path, points, pts_raw)
    name = None
    if "name" in t:
        name = ctx.string(t["name"], path + ("name",), "a name (text)")
    return Trace(net=net, layer=layer, width=width, points=points, name=name,
                 index=index, line=ctx.lines.line_of(path))


def parse_via_entry(ctx: Context, raw: Any, index: int) -> Via:
    path: KeyPath = ("via", index)
    t = ctx.table(raw, path, _VIA_KEYS, ("net", "at", "from", "to", "diameter"))
    net = ctx.net(t["net"], path + ("net",))
    at = ctx.point(t["at"], path + ("at",))
    lo = ctx.layer(t["from"], path + ("from",))
    hi = ctx.layer(t["to"], path + ("to",))
    if lo == hi:
        ctx.fail(path + ("to",), f"a via must join two different layers; 'from' and 'to' are "
                                 f"both {lo!r}")
    diameter = ctx.length(t["diameter"], path + ("diameter",), positive=True)
    wall = None
    if "wall" in t:
        wall = ctx.length(t["wall"], path + ("wall",), positive=True)
        if wall >= 0.5 * diameter:
            ctx.fail(path + ("wall",),
                     f"the plating wall {ctx.display(wall)} must be thinner than the barrel's "
                     f"radius {ctx.display(0.5 * diameter)}; leave 'wall' out for a solid barrel")
    return Via(net=net, at=at, from_layer=lo, to_layer=hi, diameter=diameter, wall=wall,
               index=index, line=ctx.lines.line_of(path))


def parse_pin_entry(ctx: Context, raw: Any, index: int) -> Pin:
    path: KeyPath = ("pin", index)
    t = ctx.table(raw, path, _PIN_KEYS, _PIN_KEYS)
    text, elem, term = ctx.terminal(t["terminal"], path + ("terminal",))
    at = ctx.point(t["at"], path + ("at",))
    layer = ctx.layer(t["layer"], path + ("layer",))
    return Pin(terminal=text, element=elem, term=term, at=at, layer=layer, index=index,
               line=ctx.lines.line_of(path))


def _spice_value(ctx: Context, value: Any, path: KeyPath, unit: str) -> float:
    what = f"a positive number in {unit} or a SPICE-style value such as '2n'"
    if isinstance(value, str):
        x = parse_spice_number(value)
        if x is None:
            ctx.fail(path, f"must be {what}; got {value!r}")
    else:
        x = ctx.number(value, path, what)
    if x <= 0:
        ctx.fail(path, f"must be {what}; got {value!r}")
    return x


def parse_loop_entry(ctx: Context, raw: Any, index: int) -> LoopSpec:
    path: KeyPath = ("loop", index)
    t = ctx.table(raw, path, _LOOP_KEYS, ("name", "path"))
    name = ctx.string(t["name"], path + ("name",), "a loop name (text)")
    stops = ctx.array(t["path"], path + ("path",), "terminals such as 'M1:d'")
    if len(stops) < 2:
        ctx.fail(path + ("path",), f"must name at least two terminals; got {len(stops)}")
    terms = tuple(ctx.terminal(s, path + ("path", k))[0] for k, s in enumerate(stops))
    limit = _spice_value(ctx, t["limit"], path + ("limit",), "H") if "limit" in t else None
    freq = (_spice_value(ctx, t["frequency"], path + ("frequency",), "Hz")
            if "frequency" in t else None)
    return LoopSpec(name=name, path=terms, limit=limit, frequency=freq, index=index,
                    line=ctx.lines.line_of(path))


_PROBE_KEYS = ("name", "tip", "ground", "tip_lead", "ground_lead", "instrument")
_CONTACT_KEYS = ("layer", "at", "net")
_LEAD_KEYS = ("points", "radius")
_INSTRUMENT_KEYS = ("resistance", "capacitance", "damping")
_INSTRUMENT_REQUIRED = ("resistance", "capacitance")
_INSTRUMENT_TABLE = "{ resistance = OHMS, capacitance = FARADS [, damping = OHMS] }"
_PROBE_NAME = re.compile(r"[A-Za-z0-9_-]+")


def _point3(ctx: Context, value: Any, path: KeyPath) -> Point3:
    what = f"a point in space [x, y, z] in {ctx.units}"
    if not isinstance(value, list) or len(value) != 3:
        ctx.fail(path, f"must be {what}; got {_describe(value)}")
    x, y, z = (ctx.number(c, path + (k,), f"a coordinate in {ctx.units}") * ctx.scale
               for k, c in enumerate(value))
    return (x, y, z)


def _probe_contact(ctx: Context, raw: Any, path: KeyPath) -> ProbeContact:
    t = ctx.table(raw, path, _CONTACT_KEYS, ("layer", "at"))
    layer = ctx.layer(t["layer"], path + ("layer",))
    at = ctx.point(t["at"], path + ("at",))
    net = ctx.net(t["net"], path + ("net",)) if "net" in t else None
    return ProbeContact(layer=layer, at=at, net=net)


def _probe_lead(ctx: Context, raw: Any, path: KeyPath, contact: ProbeContact,
                contact_key: str) -> ProbeLead:
    t = ctx.table(raw, path, _LEAD_KEYS, _LEAD_KEYS)
    radius = ctx.length(t["radius"], path + ("radius",), positive=True)
    pts_raw = ctx.array(t["points"], path + ("points",), f"points [x, y, z] in {ctx.units}")
    if len(pts_raw) < 2:
        ctx.fail(path + ("points",), f"must hold at least two points [x, y, z] (from the "
                                     f"contact to the instrument); got {len(pts_raw)}")
    points = tuple(_point3(ctx, p, path + ("points", k)) for k, p in enumerate(pts_raw))
    layer = ctx.layers[contact.layer]
    start = (contact.at[0], contact.at[1], layer.top)
    if math.dist(points[0], start) > ctx.snap:
        shown = ", ".join(f"{c / ctx.scale:.6g}" for c in start)
        ctx.fail(path + ("points", 0),
                 f"a lead starts at its contact: the first point must be [{shown}] "
                 f"({contact_key}.at on the top face of layer {contact.layer!r}); got "
                 f"{pts_raw[0]!r}")
    _check_piece_lengths(ctx, path, points, pts_raw)
    return ProbeLead(points=points, radius=radius)


def _instrument(ctx: Context, raw: Any, path: KeyPath) -> Instrument:
    presets = ", ".join(repr(k) for k in INSTRUMENT_PRESETS)
    if isinstance(raw, str):
        key = raw.strip().lower()
        if key not in INSTRUMENT_PRESETS:
            ctx.fail(path, f"unknown instrument {raw!r}; accepted: {presets}, or a table "
                           f"{_INSTRUMENT_TABLE}")
        return INSTRUMENT_PRESETS[key]
    if not isinstance(raw, dict):
        ctx.fail(path, f"must be a preset ({presets}) or a table {_INSTRUMENT_TABLE}; "
                       f"got {_describe(raw)}")
    t = ctx.table(raw, path, _INSTRUMENT_KEYS, _INSTRUMENT_REQUIRED)
    r = _spice_value(ctx, t["resistance"], path + ("resistance",), "ohm")
    c = _spice_value(ctx, t["capacitance"], path + ("capacitance",), "F")
    d = (_spice_value(ctx, t["damping"], path + ("damping",), "ohm")
         if "damping" in t else 0.0)
    return Instrument(resistance=r, capacitance=c, preset=None, damping=d)


def parse_probe_entry(ctx: Context, raw: Any, index: int) -> Probe:
    """A ``[[probe]]`` entry: ``name``; ``tip`` and ``ground`` contacts
    ``{ layer, at [, net] }`` (on the layer's top face); ``tip_lead`` and
    ``ground_lead`` ``{ points = [[x, y, z], ...], radius }``, each starting at
    its contact and ending at the instrument; ``instrument``, a preset name
    (:data:`geometry.model.INSTRUMENT_PRESETS`) or ``{ resistance, capacitance
    [, damping] }`` (numbers in ohm and F, or SPICE-style values such as
    ``"12p"``; ``damping``, a series resistance in front of the input)."""
    path: KeyPath = ("probe", index)
    t = ctx.table(raw, path, _PROBE_KEYS, _PROBE_KEYS)
    name = ctx.string(t["name"], path + ("name",), "a probe name (letters, digits, '_', '-')")
    if not _PROBE_NAME.fullmatch(name):
        ctx.fail(path + ("name",), f"a probe name is letters, digits, '_' and '-' only (it "
                                   f"names nodes of the netlist); got {name!r}")
    tip = _probe_contact(ctx, t["tip"], path + ("tip",))
    ground = _probe_contact(ctx, t["ground"], path + ("ground",))
    tip_lead = _probe_lead(ctx, t["tip_lead"], path + ("tip_lead",), tip, "tip")
    ground_lead = _probe_lead(ctx, t["ground_lead"], path + ("ground_lead",), ground, "ground")
    instrument = _instrument(ctx, t["instrument"], path + ("instrument",))
    return Probe(name=name, tip=tip, ground=ground, tip_lead=tip_lead, ground_lead=ground_lead,
                 instrument=instrument, index=index, line=ctx.lines.line_of(path))


EntryParser = Callable[[Context, Any, int], Any]

# [[kind]] -> parser; order is the order in which kinds are parsed.
ENTRY_PARSERS: dict[str, EntryParser] = {
    "trace": parse_trace_entry,
    "via": parse_via_entry,
    "pin": parse_pin_entry,
    "loop": parse_loop_entry,
    "probe": parse_probe_entry,
}


# ---------------------------------------------------------------------------
# top level


def _parse_layers(ctx: Context, raw: Any) -> dict[str, Layer]:
    path: KeyPath = ("layers",)
    if not isinstance(raw, dict):
        ctx.fail(path, f"must be a table of layers ([layers.NAME] with z and thickness); got "
                       f"{_describe(raw)}")
    layers: dict[str, Layer] = {}
    for name, spec in raw.items():
        lp = path + (name,)
        if not name.strip():
            ctx.fail(lp, "a layer name must not be empty")
        t = ctx.table(spec, lp, _LAYER_KEYS, ("z", "thickness"))
        z = ctx.length(t["z"], lp + ("z",), non_negative=True)
        th = ctx.length(t["thickness"], lp + ("thickness",), positive=True)
        plane = ctx.net(t["plane"], lp + ("plane",)) if "plane" in t else None
        layers[name] = Layer(name=name, z=z, thickness=th, plane=plane, line=ctx.lines.line_of(lp))
    tol = ctx.snap
    for a_name, a in layers.items():
        for b_name, b in layers.items():
            if a_name == b_name:
                break
            if a.z < b.top - tol and b.z < a.top - tol:
                ctx.fail(path + (a_name,),
                         f"layer {a_name!r} (z {ctx.display(a.z)} to {ctx.display(a.top)}) overlaps "
                         f"layer {b_name!r} (z {ctx.display(b.z)} to {ctx.display(b.top)}); "
                         f"layers must not share height")
    return layers


def _parse_copper(ctx: Context, raw: Any) -> Copper:
    path: KeyPath = ("copper",)
    t = ctx.table(raw, path, _COPPER_KEYS)
    d = Copper()
    rho = d.resistivity
    if "resistivity" in t:
        rho = ctx.number(t["resistivity"], path + ("resistivity",), "a positive number in ohm*m")
        if rho <= 0:
            ctx.fail(path + ("resistivity",), f"must be a positive number in ohm*m; got {rho:g}")
    tc = (ctx.number(t["temperature_coefficient"], path + ("temperature_coefficient",),
                     "a number in 1/K") if "temperature_coefficient" in t
          else d.temperature_coefficient)
    tref = (ctx.number(t["reference_temperature"], path + ("reference_temperature",),
                       "a temperature in degC") if "reference_temperature" in t
            else d.reference_temperature)
    temp = (ctx.number(t["temperature"], path + ("temperature",), "a temperature in degC")
            if "temperature" in t else d.temperature)
    for key, val in (("reference_temperature", tref), ("temperature", temp)):
        if val <= -273.15:
            ctx.fail(path + (key,), f"must be a temperature above -273.15 degC; got {val:g}")
    c = Copper(resistivity=rho, temperature_coefficient=tc, reference_temperature=tref,
               temperature=temp)
    if c.resistivity_at_temperature <= 0:
        ctx.fail(path + ("temperature",),
                 f"the resistivity at {temp:g} degC would be {c.resistivity_at_temperature:g} "
                 f"ohm*m; it must stay positive")
    return c


def _parse_nets(ctx: Context, raw: Any, copper_nets: set[str]) -> dict[str, NetOptions]:
    path: KeyPath = ("nets",)
    if not isinstance(raw, dict):
        ctx.fail(path, f"must be a table of nets ([nets.NAME] with 'anchor'); got {_describe(raw)}")
    out: dict[str, NetOptions] = {}
    for name, spec in raw.items():
        np_ = path + (name,)
        net = ctx.net(name, np_)
        if net in out:
            ctx.fail(np_, f"net {net!r} is described twice (net names ignore case; 'gnd' is '0')")
        if net not in copper_nets:
            known = ", ".join(repr(n) for n in sorted(copper_nets)) or "none"
            ctx.fail(np_, f"net {name!r} has no copper in this file; nets with copper: {known}")
        t = ctx.table(spec, np_, _NET_KEYS)
        anchor = ctx.terminal(t["anchor"], np_ + ("anchor",))[0] if "anchor" in t else None
        out[net] = NetOptions(anchor=anchor, line=ctx.lines.line_of(np_))
    return out


def _build(data: Mapping[str, Any], ctx: Context) -> Routes:
    root: KeyPath = ()
    if not isinstance(data, dict):
        ctx.fail(root, f"the file must hold a table (TOML) or an object (JSON); got {_describe(data)}")
    for k in data:
        if k not in _TOP_KEYS:
            ctx.fail((k,), f"unknown top-level key {k!r}; accepted: {', '.join(_TOP_KEYS)}")
    if "format" not in data:
        ctx.fail(root, f"missing required key 'format' (write format = {FORMAT!r})")
    if data["format"] != FORMAT:
        ctx.fail(("format",), f"unsupported format {data['format']!r}; this version reads "
                              f"{FORMAT!r}")
    if "units" not in data:
        ctx.fail(root, f"missing required key 'units' (one of {', '.join(UNIT_SCALE)})")
    units = data["units"]
    if not isinstance(units, str) or units not in UNIT_SCALE:
        ctx.fail(("units",), f"unknown unit {units!r}; accepted: "
                             f"{', '.join(repr(u) for u in UNIT_SCALE)}")
    ctx.units = units  # type: ignore[assignment]
    ctx.scale = UNIT_SCALE[units]
    if "snap" in data:
        ctx.snap = ctx.length(data["snap"], ("snap",), positive=True)
    copper = _parse_copper(ctx, data["copper"]) if "copper" in data else Copper()
    ctx.layers = _parse_layers(ctx, data.get("layers", {}))

    parsed: dict[str, list[Any]] = {}
    for kind, parser in ENTRY_PARSERS.items():
        raw = data.get(kind, [])
        items = ctx.array(raw, (kind,), f"[[{kind}]] tables")
        parsed[kind] = [parser(ctx, item, i) for i, item in enumerate(items)]
    traces: list[Trace] = parsed["trace"]
    vias: list[Via] = parsed["via"]
    pins: list[Pin] = parsed["pin"]
    loops: list[LoopSpec] = parsed["loop"]

    seen_pins: dict[tuple[str, str], Pin] = {}
    for p in pins:
        key = (p.element, p.term)
        if key in seen_pins:
            ctx.fail(("pin", p.index, "terminal"),
                     f"duplicate pin: terminal {p.terminal!r} is already placed by "
                     f"pin[{seen_pins[key].index}]; each terminal has one pin")
        seen_pins[key] = p
    seen_probes: dict[str, Probe] = {}
    for pr in parsed["probe"]:
        if pr.name.lower() in seen_probes:
            ctx.fail(("probe", pr.index, "name"),
                     f"duplicate probe name {pr.name!r} (also probe[{seen_probes[pr.name.lower()].index}]; "
                     f"names ignore case); probe names must be unique")
        seen_probes[pr.name.lower()] = pr
    seen_loops: dict[str, LoopSpec] = {}
    for lp in loops:
        if lp.name in seen_loops:
            ctx.fail(("loop", lp.index, "name"),
                     f"duplicate loop name {lp.name!r} (also loop[{seen_loops[lp.name].index}]); "
                     f"loop names must be unique")
        seen_loops[lp.name] = lp

    copper_nets = {t.net for t in traces} | {v.net for v in vias}
    copper_nets |= {la.plane for la in ctx.layers.values() if la.plane is not None}
    nets = _parse_nets(ctx, data["nets"], copper_nets) if "nets" in data else {}
    return Routes(path=ctx.file, units=ctx.units, snap=ctx.snap, copper=copper,
                  layers=ctx.layers, traces=tuple(traces), vias=tuple(vias), pins=tuple(pins),
                  loops=tuple(loops), nets=nets, probes=tuple(parsed["probe"]))


def parse_routes(data: bytes, name: str, fmt: Literal["toml", "json"]) -> Routes:
    """Parse the bytes of a routes file; ``name`` is used in messages."""
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line: int | None = data[: exc.start].count(b"\n") + 1
        raise RoutesError(f"the file is not UTF-8 text (byte {exc.start}); save it as UTF-8",
                          file=name, line=line) from None
    if text.startswith("\ufeff"):
        text = text[1:]
    if fmt == "toml":
        try:
            obj: Any = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            msg = str(exc)
            line = getattr(exc, "lineno", None)
            if line is None:
                m = re.search(r"line (\d+)", msg)
                line = int(m.group(1)) if m else None
            raise RoutesError(f"not valid TOML: {msg}", file=name, line=line) from None
        lines = toml_lines(text)
    elif fmt == "json":
        try:
            obj = json.loads(text, parse_constant=lambda c: float(c))
        except json.JSONDecodeError as exc:
            raise RoutesError(f"not valid JSON: {exc.msg} (column {exc.colno})", file=name,
                              line=exc.lineno) from None
        lines = json_lines(text)
        if lines.duplicates:
            path, line = lines.duplicates[0]
            raise RoutesError(f"duplicate key {path[-1]!r}; each key may appear once",
                              file=name, line=line, key=format_path(path))
    else:
        raise ValueError(f"unknown routes format {fmt!r}")
    return _build(obj, Context(file=name, lines=lines))


def routes_format(path: str | Path) -> Literal["toml", "json"]:
    """The format from the file name's suffix (``.toml`` or ``.json``)."""
    suffix = Path(path).suffix.lower()
    if suffix == ".toml":
        return "toml"
    if suffix == ".json":
        return "json"
    raise RoutesError(f"cannot tell the format from the suffix {suffix!r}; name the file "
                      f"*.routes.toml or *.routes.json", file=str(path))


def load_routes(path: str | Path) -> Routes:
    """Read and validate a routes file (TOML or JSON by its suffix)."""
    fmt = routes_format(path)
    try:
        data = Path(path).read_bytes()
    except OSError as exc:
        raise RoutesError(f"cannot read the file: {exc.strerror or exc}", file=str(path)) from None
    return parse_routes(data, str(path), fmt)
