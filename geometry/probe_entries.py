"""Parser of the routes file's ``[[probe]]`` entries: ``name``; ``tip`` and
``ground`` contacts ``{ layer, at [, net] }``; ``tip_lead`` and ``ground_lead``
``{ points = [[x, y, z], ...], radius }`` starting at their contact on the
layer's top face; ``instrument``, ``"10x"``, ``"1x"`` or
``{ resistance, capacitance [, damping] }`` (docs/routes-file.md, "Probes").
"""

from __future__ import annotations

import math
import re
import sys
from typing import Any

from geometry.locate import KeyPath
from geometry.model import (
    INSTRUMENT_PRESETS,
    Instrument,
    Point3,
    Probe,
    ProbeContact,
    ProbeLead,
)

if sys.version_info >= (3, 11):
    pass
else:  # pragma: no cover - Python 3.10
    pass
from geometry.entries import _check_piece_lengths, _spice_value
from geometry.routes_context import Context, _describe

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
    x, y, z = (ctx.coordinate(c, path + (k,)) for k, c in enumerate(value))
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
    if tip.layer == ground.layer and math.dist(tip.at, ground.at) <= ctx.snap:
        ctx.fail(path + ("ground", "at"), "the ground contact is where the tip is; a probe "
                                          "reads between two different places")
    instrument = _instrument(ctx, t["instrument"], path + ("instrument",))
    return Probe(name=name, tip=tip, ground=ground, tip_lead=tip_lead, ground_lead=ground_lead,
                 instrument=instrument, index=index, line=ctx.lines.line_of(path))
