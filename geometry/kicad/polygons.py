"""Plane geometry of the board reader: arcs as polylines, zone fills with
their holes rebuilt, polygon areas.

Arc through three points: the circumcentre of start, mid and end (a textbook
construction). Polyline of an arc within a chord tolerance ``s``: a chord of
angle ``t`` on radius ``r`` lies ``r (1 - cos(t/2))`` (the sagitta) from the
arc, so ``t = 2 acos(1 - s/r)`` is the largest step.

Zone fills: KiCad writes each filled island as one outline in which every hole
is joined to the outline by a cut of zero width, walked once in each
direction. Removing the edges walked both ways and chaining what remains gives
the outline and its holes as separate closed rings (the ring of largest area
is the outline). Area: the shoelace formula.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass

import numpy as np

Point = tuple[float, float]


def circle_through(a: Point, b: Point, c: Point) -> tuple[Point, float] | None:
    """Centre and radius of the circle through three points (m); None when
    they are collinear."""
    ax, ay = a
    bx, by = b
    cx, cy = c
    d = 2.0 * (ax * (by - cy) + bx * (cy - ay) + cx * (ay - by))
    scale = max(abs(bx - ax), abs(by - ay), abs(cx - ax), abs(cy - ay)) ** 2
    if abs(d) <= 1e-12 * scale:
        return None
    a2, b2, c2 = ax * ax + ay * ay, bx * bx + by * by, cx * cx + cy * cy
    ux = (a2 * (by - cy) + b2 * (cy - ay) + c2 * (ay - by)) / d
    uy = (a2 * (cx - bx) + b2 * (ax - cx) + c2 * (bx - ax)) / d
    return (ux, uy), math.hypot(ax - ux, ay - uy)


def arc_sweep(start: Point, mid: Point, end: Point) -> tuple[Point, float, float, float] | None:
    """(centre, radius, start angle, signed sweep) of the arc start -> mid ->
    end, angles in radians; None for collinear points (a straight piece)."""
    found = circle_through(start, mid, end)
    if found is None:
        return None
    (ux, uy), r = found
    a0 = math.atan2(start[1] - uy, start[0] - ux)
    am = math.atan2(mid[1] - uy, mid[0] - ux)
    a1 = math.atan2(end[1] - uy, end[0] - ux)
    ccw_to_end = (a1 - a0) % (2 * math.pi)
    ccw_to_mid = (am - a0) % (2 * math.pi)
    sweep = ccw_to_end if ccw_to_mid <= ccw_to_end else ccw_to_end - 2 * math.pi
    return (ux, uy), r, a0, sweep


def arc_length(start: Point, mid: Point, end: Point) -> float:
    """Length of the arc start -> mid -> end (m); the straight length when collinear."""
    found = arc_sweep(start, mid, end)
    if found is None:
        return math.dist(start, end)
    _, r, _, sweep = found
    return r * abs(sweep)


def arc_polyline(start: Point, mid: Point, end: Point, tolerance: float) -> list[Point]:
    """Points along the arc (start and end exact) whose chords stay within
    ``tolerance`` (m) of it."""
    found = arc_sweep(start, mid, end)
    if found is None:
        return [start, end]
    (ux, uy), r, a0, sweep = found
    step = 2.0 * math.acos(max(-1.0, 1.0 - tolerance / r)) if tolerance < r else math.pi
    n = max(1, math.ceil(abs(sweep) / step - 1e-9))
    out = [start]
    for k in range(1, n):
        t = a0 + sweep * k / n
        out.append((ux + r * math.cos(t), uy + r * math.sin(t)))
    out.append(end)
    return out


def signed_area(ring: np.ndarray) -> float:
    """Shoelace area of a closed ring of points (n, 2), positive when the
    points run counter-clockwise in a y-up frame."""
    x, y = ring[:, 0], ring[:, 1]
    return 0.5 * float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)))


@dataclass(frozen=True)
class FillPolygon:
    """One filled island of a zone: ``outline`` and ``holes`` as closed rings
    (n, 2) in metres, without a repeated last point."""

    outline: np.ndarray
    holes: tuple[np.ndarray, ...]

    @property
    def area(self) -> float:
        """Copper area, m^2: the outline's minus the holes'."""
        return abs(signed_area(self.outline)) - sum(abs(signed_area(h)) for h in self.holes)


def _key(p: Point, snap: float) -> tuple[int, int]:
    return (round(p[0] / snap), round(p[1] / snap))


def rebuild_holes(points: list[Point], snap: float = 1e-9) -> FillPolygon:
    """Split a KiCad fill outline (holes joined by zero-width cuts) into an
    outline and proper holes. Points closer than ``snap`` (m) are one point."""
    keys = [_key(p, snap) for p in points]
    where: dict[tuple[int, int], Point] = {}
    for k, p in zip(keys, points, strict=True):
        where.setdefault(k, p)
    edges: dict[tuple[tuple[int, int], tuple[int, int]], int] = defaultdict(int)
    n = len(keys)
    for i in range(n):
        a, b = keys[i], keys[(i + 1) % n]
        if a != b:
            edges[(a, b)] += 1
    for (a, b), count in list(edges.items()):
        back = edges.get((b, a), 0)
        if count and back:
            cancel = min(count, back)
            edges[(a, b)] -= cancel
            edges[(b, a)] -= cancel
    outgoing: dict[tuple[int, int], list[tuple[int, int]]] = defaultdict(list)
    for (a, b), count in edges.items():
        outgoing[a].extend([b] * count)
    rings: list[np.ndarray] = []
    for start in list(outgoing):
        while outgoing[start]:
            ring = [start]
            cur = outgoing[start].pop()
            while cur != start:
                ring.append(cur)
                if not outgoing[cur]:
                    break
                cur = outgoing[cur].pop()
            if len(ring) >= 3:
                rings.append(np.array([where[k] for k in ring], dtype=float))
    if not rings:
        return FillPolygon(np.zeros((0, 2)), ())
    order = sorted(range(len(rings)), key=lambda i: -abs(signed_area(rings[i])))
    return FillPolygon(rings[order[0]], tuple(rings[i] for i in order[1:]))
