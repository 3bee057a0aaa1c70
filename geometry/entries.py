"""Parsers of the routes file's ``[[trace]]``, ``[[via]]``, ``[[pin]]`` and
``[[loop]]`` entries, one function each (registered in
:data:`geometry.routes.ENTRY_PARSERS`); lengths in SI from here on.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Sequence
from typing import Any

from geometry.locate import KeyPath
from geometry.model import (
    LoopSpec,
    MutualLimit,
    PartInductance,
    Pin,
    Trace,
    Via,
)
from geometry.traps import loop_limit, milli_prefix
from geometry.values import parse_spice_number

if sys.version_info >= (3, 11):
    pass
else:  # pragma: no cover - Python 3.10
    pass
from geometry.routes_context import Context

_TRACE_KEYS = ("net", "layer", "width", "points", "name")
_VIA_KEYS = ("net", "at", "from", "to", "diameter", "wall")
_PIN_KEYS = ("terminal", "at", "layer")
_LOOP_KEYS = ("name", "path", "limit", "frequency", "mutual", "didt")
_MUTUAL_KEYS = ("loop", "limit")
_PART_KEYS = ("terminal", "inductance")


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
        trap = milli_prefix(value, unit)
        if trap is not None:
            ctx.warn(path, trap)
    else:
        x = ctx.number(value, path, what)
    if x <= 0:
        ctx.fail(path, f"must be {what}; got {value!r}")
    return ctx.number(x, path, what)  # the shared range of every number


def parse_loop_entry(ctx: Context, raw: Any, index: int) -> LoopSpec:
    path: KeyPath = ("loop", index)
    t = ctx.table(raw, path, _LOOP_KEYS, ("name", "path"))
    name = ctx.string(t["name"], path + ("name",), "a loop name (text)")
    stops = ctx.array(t["path"], path + ("path",), "terminals such as 'M1:d'")
    if len(stops) < 2:
        ctx.fail(path + ("path",), f"must name at least two terminals; got {len(stops)}")
    terms = tuple(ctx.terminal(s, path + ("path", k))[0] for k, s in enumerate(stops))
    limit = _spice_value(ctx, t["limit"], path + ("limit",), "H") if "limit" in t else None
    if limit is not None and (trap := loop_limit(limit)) is not None:
        ctx.warn(path + ("limit",), trap)
    freq = (_spice_value(ctx, t["frequency"], path + ("frequency",), "Hz")
            if "frequency" in t else None)
    mutual = []
    raw_m = ctx.array(t["mutual"], path + ("mutual",), "tables {loop = NAME, limit = H}") \
        if "mutual" in t else []
    for k, item in enumerate(raw_m):
        mp = path + ("mutual", k)
        m = ctx.table(item, mp, _MUTUAL_KEYS, _MUTUAL_KEYS)
        other = ctx.string(m["loop"], mp + ("loop",), "the name of another [[loop]]")
        if other == name:
            ctx.fail(mp + ("loop",), f"loop {name!r} names itself; a mutual limit names another loop")
        mutual.append(MutualLimit(loop=other, limit=_spice_value(ctx, m["limit"], mp + ("limit",), "H"),
                                  index=k))
    didt = _spice_value(ctx, t["didt"], path + ("didt",), "A/s") if "didt" in t else None
    return LoopSpec(name=name, path=terms, limit=limit, frequency=freq, index=index,
                    line=ctx.lines.line_of(path), mutual=tuple(mutual), didt=didt)


def parse_part_entry(ctx: Context, raw: Any, index: int) -> PartInductance:
    """``[[part]] terminal = "C5:1", inductance = "0.4n"``: a part's own series
    inductance (H) at one terminal."""
    path: KeyPath = ("part", index)
    t = ctx.table(raw, path, _PART_KEYS, _PART_KEYS)
    text, element, term = ctx.terminal(t["terminal"], path + ("terminal",))
    value = _spice_value(ctx, t["inductance"], path + ("inductance",), "H")
    return PartInductance(terminal=text, element=element, term=term, inductance=value,
                          index=index, line=ctx.lines.line_of(path))
