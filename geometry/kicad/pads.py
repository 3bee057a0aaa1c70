"""Pads as copper: which pads a track ends on, the bar that stands for a pad,
and the short stub that joins a track ending off a pad's centre line.

A pad is written as one straight bar (a ``[[trace]]`` of two points): along
the longer side of its shape, as long as that side and as wide as the shorter
one, centred on the pad and turned with it. That is exact for a rectangle,
and for round, oval, rounded and trapezoid pads the bounding rectangle (a
slight over-estimate of the copper; the current enters at the pin on the
centre line, so a pad's bar rarely carries current along its length).
"""

from __future__ import annotations

import math

import numpy as np

from geometry.kicad.board import Pad

Point = tuple[float, float]


def pad_axes(pad: Pad) -> tuple[np.ndarray, np.ndarray]:
    """Unit vectors of the pad's own x and y axes in KiCad's y-down frame
    (orientation counter-clockwise as seen from the top)."""
    a = math.radians(pad.angle)
    return np.array([math.cos(a), -math.sin(a)]), np.array([math.sin(a), math.cos(a)])


def inside_pad(pad: Pad, points: np.ndarray, slack: float = 1e-9) -> np.ndarray:
    """Which of ``points`` (n, 2), m, lie on the pad (its bounding rectangle;
    a round pad by distance)."""
    if len(points) == 0:
        return np.zeros(0, dtype=bool)
    d = points - np.asarray(pad.at)
    if pad.shape == "circle":
        return np.hypot(d[:, 0], d[:, 1]) <= 0.5 * pad.size[0] + slack
    ux, uy = pad_axes(pad)
    u, v = d @ ux, d @ uy
    return (np.abs(u) <= 0.5 * pad.size[0] + slack) & (np.abs(v) <= 0.5 * pad.size[1] + slack)


def pad_bar(pad: Pad) -> tuple[Point, Point, float]:
    """(end, end, width) of the bar standing for the pad, m."""
    ux, uy = pad_axes(pad)
    w, h = pad.size
    axis, length, width = (ux, w, h) if w >= h else (uy, h, w)
    c = np.asarray(pad.at)
    p0, p1 = c - 0.5 * length * axis, c + 0.5 * length * axis
    return (float(p0[0]), float(p0[1])), (float(p1[0]), float(p1[1])), width


def foot_on_bar(point: Point, bar: tuple[Point, Point, float]) -> Point:
    """The point of the bar's centre line nearest to ``point``."""
    (ax, ay), (bx, by), _ = bar
    dx, dy = bx - ax, by - ay
    t = ((point[0] - ax) * dx + (point[1] - ay) * dy) / (dx * dx + dy * dy)
    t = min(1.0, max(0.0, t))
    return (ax + t * dx, ay + t * dy)


def covered_by(point: Point, starts: np.ndarray, ends: np.ndarray, widths: np.ndarray) -> bool:
    """Whether ``point`` lies within half the width of any straight piece
    (start (n, 2), end (n, 2), width (n,), m)."""
    if len(starts) == 0:
        return False
    p = np.asarray(point)
    d = ends - starts
    L2 = np.einsum("ij,ij->i", d, d)
    t = np.clip(np.einsum("ij,ij->i", p - starts, d) / np.where(L2 > 0, L2, 1.0), 0.0, 1.0)
    near = starts + t[:, None] * d
    dist = np.hypot(near[:, 0] - p[0], near[:, 1] - p[1])
    return bool(np.any(dist <= 0.5 * widths + 1e-9))
