"""Polygon copper (pours): the ``[[pour]]`` entry of the routes file, validated.

A pour is a filled polygon of copper on one layer: an ``outline`` and optional
``holes`` (cut-outs, slots, clearances around other nets' vias). On a layer
marked as a return plane of the same net it is a finite plane, meshed into
current cells (:mod:`geometry.mesh`) instead of the ideal infinite plane.

Entry keys (lengths in the file's ``units``)::

    [[pour]]
    net = "0"                                   # required
    layer = "L2"                                # required
    outline = [[x, y], [x, y], [x, y], ...]     # required, >= 3 corners, closed implicitly
    holes = [[[x, y], ...], ...]                # optional, each >= 3 corners, inside the outline
    cell = 1.0                                  # optional, largest cell size (> 0)
    name = "ground pour"                        # optional, for reports

Validation (:class:`geometry.errors.RoutesError`, with the key path such as
``pour[3].outline``): an outline or hole that crosses itself, a zero-area
outline or hole, a hole not inside the outline, holes that overlap one
another, a pour on another net's return plane, and (across pours,
:func:`check_pour_overlaps`) pours of different nets that overlap on one
layer. Geometry tests are shapely's (GEOS) validity and predicates.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import shapely
from shapely.geometry import Polygon

from geometry.locate import KeyPath
from geometry.model import Point2
from geometry.routes_context import Context

POUR_KEYS = ("net", "layer", "outline", "holes", "cell", "name")
POUR_REQUIRED = ("net", "layer", "outline")

AREA_TOLERANCE = 1e-12
"""Relative area (of the bounding box) below which an outline or hole counts as zero
area, and above which an overlap of two pours counts as an overlap (m^2 / m^2)."""


@dataclass(frozen=True)
class Pour:
    """A validated pour in SI units (metres)."""

    net: str
    layer: str
    outline: tuple[Point2, ...]  # m, corners without the closing repeat
    holes: tuple[tuple[Point2, ...], ...]  # m
    cell: float | None  # m, largest cell size; None: the mesh's default
    index: int  # 0-based position among [[pour]] entries
    name: str | None = None
    line: int | None = None

    @property
    def polygon(self) -> Polygon:
        """The copper as a shapely polygon (outline with holes), m."""
        return Polygon(self.outline, self.holes)

    @property
    def key(self) -> str:
        return f"pour[{self.index}]"


def _ring(ctx: Context, raw: Any, path: KeyPath, what: str) -> tuple[Point2, ...]:
    pts_raw = ctx.array(raw, path, f"corners [x, y] in {ctx.units}")
    pts = [ctx.point(p, path + (k,)) for k, p in enumerate(pts_raw)]
    if len(pts) >= 2 and pts[0] == pts[-1]:
        pts = pts[:-1]  # a closing repeat of the first corner is accepted and dropped
    if len(pts) < 3:
        ctx.fail(path, f"{what} needs at least three corners [x, y]; got {len(pts)}")
    return tuple(pts)


def _check_ring(ctx: Context, pts: Sequence[Point2], path: KeyPath, what: str) -> Polygon:
    poly = Polygon(pts)
    x0, y0, x1, y1 = poly.bounds
    box_area = max((x1 - x0) * (y1 - y0), 0.0)
    if _on_one_line(pts) or box_area <= 0 or "Too few points" in shapely.is_valid_reason(poly):
        ctx.fail(path, f"the {what} encloses zero area (its corners lie on one line or coincide); "
                       f"a {what} needs corners that enclose copper")
    if not poly.is_valid:
        reason = shapely.is_valid_reason(poly)
        ctx.fail(path, f"the {what} crosses or touches itself ({_where(ctx, reason)}); list the "
                       f"corners in order around the boundary, without a crossing")
    if not poly.area > AREA_TOLERANCE * box_area:
        ctx.fail(path, f"the {what} encloses zero area; a {what} needs corners that enclose copper")
    return poly


def _on_one_line(pts: Sequence[Point2]) -> bool:
    """All corners on one straight line (cross products of the edges from the first
    corner all zero, to rounding)."""
    x0, y0 = pts[0]
    far = max(pts, key=lambda p: (p[0] - x0) ** 2 + (p[1] - y0) ** 2)
    dx, dy = far[0] - x0, far[1] - y0
    scale = dx * dx + dy * dy
    return scale == 0 or all(abs(dx * (y - y0) - dy * (x - x0)) <= 1e-12 * scale for x, y in pts)


def _where(ctx: Context, reason: str) -> str:
    """shapely's validity reason with its point written in the file's units."""
    head, _, tail = reason.partition("[")
    try:
        x, y = (float(v) / ctx.scale for v in tail.rstrip("]").split()[:2])
    except ValueError:
        return reason
    return f"{head.strip().lower()} near [{x:.6g}, {y:.6g}] {ctx.units}"


def parse_pour_entry(ctx: Context, raw: Any, index: int) -> Pour:
    """One ``[[pour]]`` table -> :class:`Pour` (lengths times ``ctx.scale``, m).

    Strict: unknown keys are errors; every error names ``pour[index]`` and the key.
    The signature is that of :data:`geometry.routes.ENTRY_PARSERS`."""
    path: KeyPath = ("pour", index)
    t = ctx.table(raw, path, POUR_KEYS, POUR_REQUIRED)
    net = ctx.net(t["net"], path + ("net",))
    layer = ctx.layer(t["layer"], path + ("layer",))
    plane = ctx.layers[layer].plane
    if plane is not None and plane != net:
        ctx.fail(path + ("layer",), f"layer {layer!r} is the return plane of net {plane!r}; a pour "
                                    f"of net {net!r} cannot lie on it")
    outline = _ring(ctx, t["outline"], path + ("outline",), "outline")
    shell = _check_ring(ctx, outline, path + ("outline",), "outline")
    holes: list[tuple[Point2, ...]] = []
    hole_polys: list[Polygon] = []
    if "holes" in t:
        raw_holes = ctx.array(t["holes"], path + ("holes",), "holes, each an array of corners")
        for k, h in enumerate(raw_holes):
            hp = path + ("holes", k)
            ring = _ring(ctx, h, hp, "hole")
            poly = _check_ring(ctx, ring, hp, "hole")
            if not shell.contains(poly):
                ctx.fail(hp, "the hole is not inside the outline (it reaches the outline or beyond); "
                             "a cut-out that opens onto the edge belongs in the outline itself")
            for j, other in enumerate(hole_polys):
                if poly.intersects(other):
                    ctx.fail(hp, f"the hole touches or overlaps hole {j} of the same pour; "
                                 f"merge them into one hole")
            holes.append(ring)
            hole_polys.append(poly)
    cell = ctx.length(t["cell"], path + ("cell",), positive=True) if "cell" in t else None
    name = ctx.string(t["name"], path + ("name",), "a name (text)") if "name" in t else None
    return Pour(net=net, layer=layer, outline=outline, holes=tuple(holes), cell=cell,
                index=index, name=name, line=ctx.lines.line_of(path))


def check_pour_overlaps(ctx: Context, pours: Sequence[Pour]) -> None:
    """Pours of different nets on one layer must not overlap (an overlap of
    positive area); the later entry is named. Vectorised with shapely's STRtree."""
    if len(pours) < 2:
        return
    polys = [p.polygon for p in pours]
    tree = shapely.STRtree(polys)
    left, right = tree.query(polys, predicate="intersects")
    for a, b in sorted(zip(left.tolist(), right.tolist(), strict=True), key=lambda ab: (max(ab), min(ab))):
        if a >= b:
            continue
        pa, pb = pours[a], pours[b]
        if pa.layer != pb.layer or pa.net == pb.net:
            continue
        overlap = polys[a].intersection(polys[b]).area
        if overlap > AREA_TOLERANCE * min(polys[a].area, polys[b].area):
            ctx.fail(("pour", pb.index, "outline"),
                     f"pour of net {pb.net!r} overlaps pour[{pa.index}] of net {pa.net!r} on layer "
                     f"{pb.layer!r} (shared area {overlap / ctx.scale**2:.6g} {ctx.units}^2); "
                     f"copper of two nets cannot share a place")
