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
import re
import sys
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any, Literal

from geometry.errors import RoutesError
from geometry.limits import (
    MAX_ENTRIES_PER_KIND,
    MAX_NESTING,
    MAX_ROUTES_ARRAYS,
    MAX_TEMPERATURE_COEFFICIENT,
    RESISTIVITY_RANGE,
    TEMPERATURE_RANGE_C,
)
from geometry.locate import KeyPath, LineMap, format_path, json_lines, toml_lines
from geometry.model import (
    UNIT_SCALE,
    Copper,
    Layer,
    LoopSpec,
    NetOptions,
    Pin,
    Probe,
    Routes,
    Trace,
    Via,
)

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib
from geometry.entries import (
    parse_loop_entry,
    parse_part_entry,
    parse_pin_entry,
    parse_trace_entry,
    parse_via_entry,
)
from geometry.probe_entries import parse_probe_entry
from geometry.routes_context import DEFAULT_SNAP_M, FORMAT, Context, _describe

_TOP_KEYS = ("format", "units", "snap", "copper", "layers", "nets",
             "trace", "via", "pin", "loop", "probe", "pour", "part")
_COPPER_KEYS = ("resistivity", "temperature_coefficient", "reference_temperature", "temperature")
_LAYER_KEYS = ("z", "thickness", "plane")
_NET_KEYS = ("anchor",)

__all__ = ["DEFAULT_SNAP_M", "ENTRY_PARSERS", "FORMAT", "Context", "load_routes", "parse_loop_entry",
           "parse_pin_entry", "parse_probe_entry", "parse_routes", "parse_trace_entry",
           "parse_via_entry", "routes_format", "tomllib"]



EntryParser = Callable[[Context, Any, int], Any]


def _parse_pour(ctx: Context, raw: Any, index: int) -> Any:
    from geometry.pour import parse_pour_entry  # geometry.pour imports this module
    return parse_pour_entry(ctx, raw, index)

# [[kind]] -> parser; order is the order in which kinds are parsed.
ENTRY_PARSERS: dict[str, EntryParser] = {
    "trace": parse_trace_entry,
    "via": parse_via_entry,
    "pin": parse_pin_entry,
    "loop": parse_loop_entry,
    "probe": parse_probe_entry,
    "pour": _parse_pour,
    "part": parse_part_entry,
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
    rho = (ctx.checked(t["resistivity"], path + ("resistivity",), *RESISTIVITY_RANGE,
                       "a positive number in ohm*m") if "resistivity" in t else d.resistivity)
    tc = (ctx.checked(t["temperature_coefficient"], path + ("temperature_coefficient",),
                      -MAX_TEMPERATURE_COEFFICIENT, MAX_TEMPERATURE_COEFFICIENT, "a number in 1/K")
          if "temperature_coefficient" in t else d.temperature_coefficient)
    temps = {}
    for key, default in (("reference_temperature", d.reference_temperature),
                         ("temperature", d.temperature)):
        temps[key] = (ctx.checked(t[key], path + (key,), *TEMPERATURE_RANGE_C,
                                  "a temperature in degC", low_open=True)
                      if key in t else default)
    tref, temp = temps["reference_temperature"], temps["temperature"]
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
        items = ctx.array(raw, (kind,), f"[[{kind}]] tables", limit=MAX_ENTRIES_PER_KIND)
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
    _check_loop_references(ctx, loops, seen_loops, parsed["part"])

    pours = tuple(parsed["pour"])
    if pours:
        from geometry.pour import check_pour_overlaps
        check_pour_overlaps(ctx, pours)
    copper_nets = {t.net for t in traces} | {v.net for v in vias} | {p.net for p in pours}
    copper_nets |= {la.plane for la in ctx.layers.values() if la.plane is not None}
    nets = _parse_nets(ctx, data["nets"], copper_nets) if "nets" in data else {}
    _warn_board_size(ctx, traces, vias, pins, pours)
    return Routes(path=ctx.file, units=ctx.units, snap=ctx.snap, copper=copper,
                  layers=ctx.layers, traces=tuple(traces), vias=tuple(vias), pins=tuple(pins),
                  loops=tuple(loops), nets=nets, probes=tuple(parsed["probe"]),
                  pours=pours, parts=tuple(parsed["part"]), warnings=tuple(ctx.warnings))


def _check_loop_references(ctx: Context, loops: list[LoopSpec], by_name: dict[str, LoopSpec],
                           parts: list[Any]) -> None:
    """A loop's ``mutual`` limits name other loops of the file, once each; a
    terminal has at most one ``[[part]]``."""
    for lp in loops:
        seen: set[str] = set()
        for m in lp.mutual:
            key = ("loop", lp.index, "mutual", m.index, "loop")
            if m.loop not in by_name:
                known = ", ".join(repr(n) for n in by_name)
                ctx.fail(key, f"loop {lp.name!r} names unknown loop {m.loop!r}; the loops are: {known}")
            if m.loop in seen:
                ctx.fail(key, f"loop {lp.name!r} names loop {m.loop!r} twice in 'mutual'")
            seen.add(m.loop)
    terminals: dict[tuple[str, str], int] = {}
    for p in parts:
        if (p.element, p.term) in terminals:
            ctx.fail(("part", p.index, "terminal"),
                     f"terminal {p.terminal!r} already has a part inductance "
                     f"(part[{terminals[(p.element, p.term)]}]); give one value per terminal")
        terminals[(p.element, p.term)] = p.index


def _warn_board_size(ctx: Context, traces: list[Trace], vias: list[Via], pins: list[Pin],
                     pours: tuple[Any, ...] = ()) -> None:
    """A warning (:mod:`geometry.traps`) when the copper spans more than 1 m."""
    from geometry.traps import board_size, board_span

    points = [p for t in traces for p in t.points] + [v.at for v in vias] + [p.at for p in pins]
    points += [p for pour in pours for p in pour.outline]
    trap = board_size(board_span(points), ctx.units)
    if trap is not None:
        ctx.warn(("units",), trap)


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
    _check_size(data, name)
    try:
        obj, lines = _decode(text, name, fmt)
    except RecursionError:
        raise RoutesError(f"tables or arrays are nested deeper than the reader can follow; at "
                          f"most {MAX_NESTING} levels are accepted", file=name) from None
    _check_depth(obj, name, lines)
    return _build(obj, Context(file=name, lines=lines))


def _decode(text: str, name: str, fmt: str) -> tuple[Any, LineMap]:
    """The parsed object and its line map (TOML or JSON)."""
    if fmt == "toml":
        try:
            obj: Any = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            msg = str(exc)
            line = getattr(exc, "lineno", None)
            if line is None:
                m = re.search(r"line (\d+)", msg)
                line = int(m.group(1)) if m else None
            if line is None and "end of document" in msg:
                line = text.count("\n") + 1
            raise RoutesError(f"not valid TOML: {msg}", file=name, line=line) from None
        except ValueError as exc:  # an integer beyond Python's digit limit
            raise RoutesError(f"not a number this reader accepts: {exc}", file=name,
                              line=_long_digits_line(text)) from None
        lines = toml_lines(text)
    elif fmt == "json":
        try:
            obj = json.loads(text, parse_constant=lambda c: float(c))
        except json.JSONDecodeError as exc:
            raise RoutesError(f"not valid JSON: {exc.msg} (column {exc.colno})", file=name,
                              line=exc.lineno) from None
        except ValueError as exc:  # an integer beyond Python's digit limit
            raise RoutesError(f"not a number this reader accepts: {exc}", file=name,
                              line=_long_digits_line(text)) from None
        lines = json_lines(text)
        if lines.duplicates:
            path, line = lines.duplicates[0]
            raise RoutesError(f"duplicate key {path[-1]!r}; each key may appear once",
                              file=name, line=line, key=format_path(path))
    else:
        raise ValueError(f"unknown routes format {fmt!r}")
    return obj, lines


def _long_digits_line(text: str) -> int | None:
    m = re.search(r"\d{1000}", text)
    return text.count("\n", 0, m.start()) + 1 if m else None


def _check_size(data: bytes, name: str) -> None:
    """Refuse, before parsing, a file with more arrays than any board needs."""
    n = data.count(b"[")
    if n > MAX_ROUTES_ARRAYS:
        raise RoutesError(f"the file holds {n} arrays ('['); at most {MAX_ROUTES_ARRAYS} are "
                          f"accepted (a limit far above any real board, see 'Limits' in "
                          f"docs/routes-file.md)", file=name)


def _check_depth(obj: Any, name: str, lines: LineMap) -> None:
    """Refuse tables and arrays nested deeper than :data:`MAX_NESTING` (iteratively)."""
    stack: list[tuple[Any, KeyPath]] = [(obj, ())]
    while stack:
        value, path = stack.pop()
        if len(path) > MAX_NESTING:
            raise RoutesError(f"tables or arrays nested {len(path)} deep; at most {MAX_NESTING} "
                              f"levels are accepted", file=name, line=lines.line_of(path[:8]),
                              key=format_path(path[:8]) + "...")
        if isinstance(value, dict):
            stack.extend((v, path + (k,)) for k, v in value.items())
        elif isinstance(value, list):
            stack.extend((v, path + (i,)) for i, v in enumerate(value))


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
