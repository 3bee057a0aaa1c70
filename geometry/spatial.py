"""Vectorised plane geometry for the copper graph: candidate pairs of boxes,
point-to-segment and segment-to-segment distances, crossings.

All inputs are numpy arrays in metres; nothing here loops over pairs in
Python except over chunks of candidate pairs (to bound memory).
"""

from __future__ import annotations

import numpy as np

_EMPTY = np.zeros(0, dtype=np.int64)


def box_pairs(
    xmin: np.ndarray, xmax: np.ndarray, ymin: np.ndarray, ymax: np.ndarray,
    chunk: int = 1_000_000,
) -> tuple[np.ndarray, np.ndarray]:
    """All pairs ``(i, j)``, ``i < j``, of axis-aligned boxes that overlap
    (closed boxes: touching counts), sorted by ``(i, j)``.

    Sort and sweep along x: after sorting by ``xmin``, the boxes that can
    overlap box ``k`` in x are the run that follows it up to the first box
    starting after ``xmax[k]``; the runs are expanded with ``np.repeat`` in
    chunks of about ``chunk`` candidates and filtered on y. The cost grows
    with the number of x-overlapping pairs.
    """
    n = len(xmin)
    if n < 2:
        return _EMPTY, _EMPTY
    order = np.argsort(xmin, kind="stable")
    xs = xmin[order]
    hi = np.searchsorted(xs, xmax[order], side="right")
    counts = np.maximum(hi - np.arange(n) - 1, 0)
    cum = np.cumsum(counts)
    out_i: list[np.ndarray] = []
    out_j: list[np.ndarray] = []
    start = 0
    while start < n:
        base = int(cum[start - 1]) if start else 0
        end = max(int(np.searchsorted(cum, base + chunk, side="right")), start + 1)
        c = counts[start:end]
        total = int(c.sum())
        if total:
            a = np.repeat(np.arange(start, end), c)
            offs = np.arange(total) - np.repeat(np.cumsum(c) - c, c)
            ia = order[a]
            ib = order[a + 1 + offs]
            keep = (ymin[ia] <= ymax[ib]) & (ymin[ib] <= ymax[ia])
            ia, ib = ia[keep], ib[keep]
            out_i.append(np.minimum(ia, ib))
            out_j.append(np.maximum(ia, ib))
        start = end
    if not out_i:
        return _EMPTY, _EMPTY
    i = np.concatenate(out_i)
    j = np.concatenate(out_j)
    o = np.lexsort((j, i))
    return i[o], j[o]


def project(
    px: np.ndarray, py: np.ndarray, ax: np.ndarray, ay: np.ndarray, bx: np.ndarray, by: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Position of points P along segments AB: ``(t, d)`` with ``t`` the
    unclamped parameter of the foot of the perpendicular (0 at A, 1 at B) and
    ``d`` the distance from P to the segment (nearest point, t clamped)."""
    dx, dy = bx - ax, by - ay
    l2 = dx * dx + dy * dy
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.where(l2 > 0, ((px - ax) * dx + (py - ay) * dy) / np.where(l2 > 0, l2, 1.0), 0.0)
    tc = np.clip(t, 0.0, 1.0)
    d = np.hypot(ax + tc * dx - px, ay + tc * dy - py)
    return t, d


def crossings(
    ax: np.ndarray, ay: np.ndarray, bx: np.ndarray, by: np.ndarray,
    cx: np.ndarray, cy: np.ndarray, dx: np.ndarray, dy: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Where segments AB and CD cross: ``(s, u, ok)`` with the point at
    ``A + s (B - A) = C + u (D - C)``; ``ok`` is False for parallel pairs."""
    rx, ry = bx - ax, by - ay
    qx, qy = dx - cx, dy - cy
    den = rx * qy - ry * qx
    scale = np.hypot(rx, ry) * np.hypot(qx, qy)
    ok = np.abs(den) > 1e-12 * np.where(scale > 0, scale, 1.0)
    safe = np.where(ok, den, 1.0)
    wx, wy = cx - ax, cy - ay
    s = (wx * qy - wy * qx) / safe
    u = (wx * ry - wy * rx) / safe
    return s, u, ok


def segment_distance(
    ax: np.ndarray, ay: np.ndarray, bx: np.ndarray, by: np.ndarray,
    cx: np.ndarray, cy: np.ndarray, dx: np.ndarray, dy: np.ndarray,
) -> np.ndarray:
    """Shortest distance between segments AB and CD (0 where they cross)."""
    d = np.minimum.reduce([
        project(cx, cy, ax, ay, bx, by)[1],
        project(dx, dy, ax, ay, bx, by)[1],
        project(ax, ay, cx, cy, dx, dy)[1],
        project(bx, by, cx, cy, dx, dy)[1],
    ])
    s, u, ok = crossings(ax, ay, bx, by, cx, cy, dx, dy)
    cross = ok & (s >= 0) & (s <= 1) & (u >= 0) & (u <= 1)
    return np.where(cross, 0.0, d)
