"""Test geometry: closed polygons of straight conductors as segment arrays,
with the current vector of each polygon (+1 A along its point order)."""

from __future__ import annotations

import numpy as np

from geometry.model import SegmentArrays


def polygons(loops: list[np.ndarray], *, radius: float = 0.0, width: float = 0.0,
             thickness: float = 0.0, mirror_z: float = float("nan")
             ) -> tuple[SegmentArrays, np.ndarray]:
    """Segments of closed polygons ``loops`` (each (n, 3) m, closed back to its
    first point): round wires of ``radius`` when > 0, else bars ``width`` x
    ``thickness``. Returns the arrays and currents (len(loops), N), +1 on a
    polygon's own segments."""
    start = np.vstack([p for p in loops])
    end = np.vstack([np.roll(p, -1, axis=0) for p in loops])
    n = len(start)
    currents = np.zeros((len(loops), n))
    k = 0
    for j, p in enumerate(loops):
        currents[j, k:k + len(p)] = 1.0
        k += len(p)
    rnd = radius > 0
    size = 2 * radius if rnd else width
    return SegmentArrays(
        start=start, end=end, width=np.full(n, size), thickness=np.full(n, 2 * radius if rnd else thickness),
        round=np.full(n, rnd), radius=np.full(n, radius), inner_radius=np.zeros(n),
        net_index=np.zeros(n, int), node_from=np.arange(n), node_to=np.arange(n) + n,
        mirror_z=np.full(n, mirror_z)), currents


def circle(radius: float, sides: int, z: float = 0.0) -> np.ndarray:
    """Regular polygon of ``sides`` vertices on a circle of ``radius`` (m) at height z."""
    t = 2 * np.pi * np.arange(sides) / sides
    return np.column_stack([radius * np.cos(t), radius * np.sin(t), np.full(sides, z)])


def rectangle(x0: float, y0: float, x1: float, y1: float, z: float = 0.0) -> np.ndarray:
    """Counter-clockwise rectangle (m)."""
    return np.array([[x0, y0, z], [x1, y0, z], [x1, y1, z], [x0, y1, z]], float)
