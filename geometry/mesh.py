"""A pour meshed into current cells (Manhattan partial element equivalent circuit mesh).

Method: the partial element equivalent circuit method (A. E. Ruehli, "Equivalent
circuit models for three-dimensional multiconductor systems", IEEE Trans. MTT
22(3), 1974) with rectangular volume cells of uniform current in two orthogonal
directions (the volume cells of A. E. Ruehli and H. Heeb, "Circuit models for
three-dimensional geometries including dielectrics", IEEE Trans. MTT 40(7), 1992).

Grid: a non-uniform rectilinear grid of lines ``gx`` (x = const) and ``gy``
(y = const). Every corner of the outline and the holes, and every refinement
point (vias, pins, trace ends, trace centre lines: where current enters or
crowds), puts a grid line through it; between those lines the spacing grows
from ``fine`` at a line to at most ``cell`` away from it (spacing
``h(d) = min(cell, fine + GRADING max(d - fine, 0))`` at distance ``d`` from the
nearest such line, lines placed by equidistributing the integral of 1/h, so the
first cell beside a line is at most ``fine``).

Nodes: the grid crossings covered by the copper (on its boundary included).
Cells: an x-cell joins two nodes adjacent along a grid row; it is a bar from
one node to the other, of the layer's thickness, whose width is the node pitch
across it (half the distance to the row below plus half that to the row above,
so the cells of a column tile the copper), clipped to the copper: the band's
area inside the polygon divided by the cell's length gives the bar's width,
and its centroid the bar's centre line. A cell exists only if the straight
line between its nodes stays on the copper (it never crosses a hole or slot)
and the clipped band has area. y-cells likewise along grid columns. Nodes
left without a cell are dropped. A rectilinear pour is tiled exactly; a slanted
edge is followed to within one cell.

Defaults: ``cell`` = min(:data:`DEFAULT_CELL`, a quarter of the shorter side of
the pour's bounding box); ``fine`` = :data:`FINE_RATIO` x ``cell`` (cells at
edges, holes and refinement points a quarter of the interior size).

Everything in SI: metres. The cells come out as
:class:`geometry.model.SegmentArrays` (bars: ``round`` False) so that the
existing extraction (``parasite.extract.inductance_matrix``, ``resistances``)
runs on them unchanged.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry

from geometry.errors import RoutesError
from geometry.model import Layer, SegmentArrays
from geometry.pour import Pour

DEFAULT_CELL = 1e-3
"""m: the largest cell size when the pour gives none (and its box is large)."""
FINE_RATIO = 0.25
"""fine / cell: the cell size at edges, holes and refinement points."""
GRADING = 0.5
"""Growth of the spacing per unit distance from a grid feature (dimensionless):
a neighbouring spacing is at most about 1.5 times the previous one."""
Size = float | tuple[float, float]
"""A cell size (m): one for both axes, or (along x, along y)."""
_SAMPLES = 513  # samples of 1/h per feature interval for the equidistribution


@dataclass(frozen=True)
class PourMesh:
    """A meshed pour: M nodes, N cells (bars), in metres."""

    gx: np.ndarray  # (nx,) grid lines x = const
    gy: np.ndarray  # (ny,) grid lines y = const
    node_xy: np.ndarray  # (M, 2)
    node_ij: np.ndarray  # (M, 2) int: grid indices (into gx, gy)
    z: float  # height of the cells' centre lines (the layer's mid-plane)
    thickness: float  # m, the layer's copper thickness
    start: np.ndarray  # (N, 3)
    end: np.ndarray  # (N, 3)
    width: np.ndarray  # (N,)
    axis: np.ndarray  # (N,) int: 0 x-cell, 1 y-cell
    node_from: np.ndarray  # (N,) int, local node ids
    node_to: np.ndarray  # (N,) int

    @property
    def n_nodes(self) -> int:
        return int(self.node_xy.shape[0])

    @property
    def n_cells(self) -> int:
        return int(self.start.shape[0])

    def arrays(self, *, node_offset: int = 0, net_index: int = 0,
               mirror_z: float = math.nan) -> SegmentArrays:
        """The cells as segment arrays (bars), node ids shifted by ``node_offset``."""
        n = self.n_cells
        return SegmentArrays(
            start=self.start.copy(), end=self.end.copy(), width=self.width.copy(),
            thickness=np.full(n, self.thickness), round=np.zeros(n, dtype=bool),
            radius=np.zeros(n), inner_radius=np.zeros(n),
            net_index=np.full(n, net_index, dtype=np.int64),
            node_from=self.node_from + node_offset, node_to=self.node_to + node_offset,
            mirror_z=np.full(n, float(mirror_z)))

    def nearest_node(self, xy: Sequence[float]) -> int:
        """Id of the node nearest the point ``xy`` (m)."""
        d2 = np.sum((self.node_xy - np.asarray(xy, dtype=float)[None, :]) ** 2, axis=1)
        return int(np.argmin(d2))

    def nodes_covered(self, geom: BaseGeometry) -> np.ndarray:
        """Ids of the nodes that ``geom`` (a via's disc, a pin's pad, a trace's end,
        an edge as a line) covers; the nearest node when it covers none, so that
        anything touching the pour joins it."""
        pts = shapely.points(self.node_xy)
        hit = np.flatnonzero(shapely.covered_by(pts, geom))
        if hit.size:
            return hit
        return np.array([int(np.argmin(shapely.distance(pts, geom)))])

    def cell_centres(self) -> np.ndarray:
        """(N, 2) midpoints of the cells in the board plane (m)."""
        return 0.5 * (self.start[:, :2] + self.end[:, :2])


def grid_lines(lo: float, hi: float, features: Iterable[float], cell: float,
               fine: float) -> np.ndarray:
    """Grid line positions on [lo, hi] (m): every feature in range is a line,
    the spacing grows from ``fine`` at a feature to at most ``cell``
    (module docstring)."""
    if not (hi > lo and cell > 0 and 0 < fine <= cell):
        raise ValueError(f"grid_lines needs lo < hi and 0 < fine <= cell; got {lo}, {hi}, "
                         f"{fine}, {cell}")
    tol = 1e-6 * fine
    f = np.asarray(sorted({lo, hi, *(float(v) for v in features if lo - tol <= v <= hi + tol)}))
    f = np.clip(f, lo, hi)
    keep = np.concatenate([[True], np.diff(f) > tol])
    f = f[keep]
    f[-1] = hi
    out = [f[:1]]
    frac = np.linspace(0.0, 1.0, _SAMPLES)
    for a, b in zip(f[:-1], f[1:], strict=True):
        span = b - a
        s = frac * span
        d = np.maximum(np.minimum(s, span - s) - fine, 0.0)
        h = np.minimum(cell, fine + GRADING * d)
        inv = 1.0 / h
        cum = np.concatenate([[0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(s))])
        n = max(1, math.ceil(cum[-1] - 1e-9))
        inner = np.interp(np.arange(1, n) / n * cum[-1], cum, s) + a
        out.append(inner)
        out.append(np.array([b]))
    return np.concatenate(out)


def _pair(size: Size) -> tuple[float, float]:
    if isinstance(size, tuple):
        return float(size[0]), float(size[1])
    return float(size), float(size)


def default_cell(polygon: Polygon) -> float:
    """min(DEFAULT_CELL, shorter side of the bounding box / 4), m."""
    x0, y0, x1, y1 = polygon.bounds
    return min(DEFAULT_CELL, 0.25 * min(x1 - x0, y1 - y0))


def mesh_polygon(polygon: Polygon, *, z: float, thickness: float, cell: Size | None = None,
                 fine: Size | None = None, refine: Sequence[Sequence[float]] = (),
                 refine_x: Sequence[float] = (), refine_y: Sequence[float] = (),
                 key: str = "pour") -> PourMesh:
    """Mesh a polygon with holes (m) into x- and y-cells at height ``z`` (m, the
    cells' centre lines) of copper ``thickness`` (m). ``refine`` points (x, y)
    put a grid line through each coordinate (vias, pins, trace ends);
    ``refine_x`` / ``refine_y`` add single lines (a trace's centre line along x
    is a ``refine_y``). ``cell`` and ``fine`` are one size or (along x, along y).
    ``key`` names the entry in errors."""
    if not (polygon.is_valid and polygon.area > 0):
        raise RoutesError("cannot mesh: the polygon is not valid or has no area", key=key)
    if not thickness > 0:
        raise RoutesError(f"cannot mesh: the thickness must be positive; got {thickness!r}", key=key)
    cx, cy = _pair(default_cell(polygon) if cell is None else cell)
    fx, fy = (FINE_RATIO * cx, FINE_RATIO * cy) if fine is None else _pair(fine)
    fx, fy = min(fx, cx), min(fy, cy)
    if not (cx > 0 and cy > 0 and fx > 0 and fy > 0):
        raise RoutesError(f"cannot mesh: cell sizes must be positive; got cell {cell!r}, "
                          f"fine {fine!r}", key=key)
    rings = [np.asarray(polygon.exterior.coords)] + [np.asarray(r.coords) for r in polygon.interiors]
    corners = np.concatenate(rings)
    pts = np.asarray(refine, dtype=float).reshape(-1, 2)
    x0, y0, x1, y1 = polygon.bounds
    gx = grid_lines(x0, x1, [*corners[:, 0], *pts[:, 0], *refine_x], cx, fx)
    gy = grid_lines(y0, y1, [*corners[:, 1], *pts[:, 1], *refine_y], cy, fy)

    shapely.prepare(polygon)
    nx, ny = gx.size, gy.size
    ii, jj = np.meshgrid(np.arange(nx), np.arange(ny), indexing="ij")
    inside = shapely.covered_by(shapely.points(gx[ii], gy[jj]), polygon)  # (nx, ny)

    # half pitches: band of row j runs from gy[j] - below[j] to gy[j] + above[j]
    def halves(g: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        d = np.diff(g) / 2
        return np.concatenate([[0.0], d]), np.concatenate([d, [0.0]])

    below_y, above_y = halves(gy)
    below_x, above_x = halves(gx)
    parts = []
    # x-cells: (i, j) -> (i + 1, j)
    ci, cj = np.nonzero(inside[:-1, :] & inside[1:, :])
    parts.append(_cells(polygon, 0, gx[ci], gx[ci + 1], gy[cj], gy[cj] - below_y[cj],
                        gy[cj] + above_y[cj], ci * ny + cj, (ci + 1) * ny + cj))
    # y-cells: (i, j) -> (i, j + 1)
    ci, cj = np.nonzero(inside[:, :-1] & inside[:, 1:])
    parts.append(_cells(polygon, 1, gy[cj], gy[cj + 1], gx[ci], gx[ci] - below_x[ci],
                        gx[ci] + above_x[ci], ci * ny + cj, ci * ny + cj + 1))
    axis = np.concatenate([p[0] for p in parts])
    a0, a1, c, w = (np.concatenate([p[k] for p in parts]) for k in range(1, 5))
    g_from, g_to = (np.concatenate([p[k] for p in parts]) for k in (5, 6))
    if axis.size == 0:
        raise RoutesError(f"cannot mesh: no cell fits in the copper at cell size {cx:g} x {cy:g} m; give "
                          f"a smaller cell", key=key)
    used = np.unique(np.concatenate([g_from, g_to]))
    local = np.full(nx * ny, -1, dtype=np.int64)
    local[used] = np.arange(used.size)
    node_ij = np.stack([used // ny, used % ny], axis=1)
    xs = axis == 0
    start = np.empty((axis.size, 3))
    end = np.empty((axis.size, 3))
    start[:, 0] = np.where(xs, a0, c)
    start[:, 1] = np.where(xs, c, a0)
    end[:, 0] = np.where(xs, a1, c)
    end[:, 1] = np.where(xs, c, a1)
    start[:, 2] = end[:, 2] = z
    return PourMesh(gx=gx, gy=gy, node_xy=np.stack([gx[node_ij[:, 0]], gy[node_ij[:, 1]]], axis=1),
                    node_ij=node_ij, z=float(z), thickness=float(thickness), start=start, end=end,
                    width=w, axis=axis, node_from=local[g_from], node_to=local[g_to])


def mesh_pour(pour: Pour, layer: Layer, *, refine: Sequence[Sequence[float]] = (),
              refine_x: Sequence[float] = (), refine_y: Sequence[float] = (),
              fine: float | None = None) -> PourMesh:
    """Mesh a validated pour on its layer (cells at the layer's mid-plane, of its
    thickness), with the pour's ``cell`` (or the default)."""
    return mesh_polygon(pour.polygon, z=layer.mid, thickness=layer.thickness, cell=pour.cell,
                        fine=fine, refine=refine, refine_x=refine_x, refine_y=refine_y,
                        key=f"{pour.key}.outline")


def _cells(polygon: Polygon, axis: int, a0: np.ndarray, a1: np.ndarray, c: np.ndarray,
           lo: np.ndarray, hi: np.ndarray, g_from: np.ndarray,
           g_to: np.ndarray) -> tuple[np.ndarray, ...]:
    """Candidate cells along ``axis`` from a0 to a1 at cross position c, band [lo, hi],
    clipped to the polygon; returns (axis, a0, a1, centre, width, from, to) of those kept."""
    if axis == 0:
        lines = shapely.linestrings(np.stack([np.stack([a0, c], 1), np.stack([a1, c], 1)], 1))
        boxes = shapely.box(a0, lo, a1, hi)
    else:
        lines = shapely.linestrings(np.stack([np.stack([c, a0], 1), np.stack([c, a1], 1)], 1))
        boxes = shapely.box(lo, a0, hi, a1)
    ok = shapely.covered_by(lines, polygon)
    clipped = shapely.intersection(boxes[ok], polygon)
    area = shapely.area(clipped)
    length = (a1 - a0)[ok]
    good = area > 1e-9 * length * (hi - lo)[ok]
    cen = shapely.get_coordinates(shapely.centroid(clipped[good]))
    idx = np.flatnonzero(ok)[good]
    centre = cen[:, 1] if axis == 0 else cen[:, 0]
    return (np.full(idx.size, axis), a0[idx], a1[idx], centre, area[good] / length[good],
            g_from[idx], g_to[idx])


def stack_arrays(parts: Sequence[SegmentArrays]) -> SegmentArrays:
    """Concatenate segment arrays (node ids must already be global)."""
    names = ("start", "end", "width", "thickness", "round", "radius", "inner_radius",
             "net_index", "node_from", "node_to", "mirror_z")
    return SegmentArrays(**{k: np.concatenate([getattr(p, k) for p in parts]) for k in names})
