"""The Manhattan cell mesh of a pour: cells tile the copper, respect holes and
slots, grade toward edges and refinement points.

References: areas and containment from shapely (GEOS) on the same polygon,
independently of the mesh's own bookkeeping; the tiling property (the x-cells
of any cross-section add up to the copper's width there) is the defining
property of the Manhattan partial-element mesh (Ruehli 1974; Ruehli & Heeb 1992,
volume cells), checked to 1e-9 relative (rounding only).
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from shapely.geometry import LineString, Point, Polygon, box

from geometry.errors import RoutesError
from geometry.mesh import FINE_RATIO, grid_lines, mesh_polygon, mesh_pour
from geometry.model import Layer
from geometry.pour import Pour

Z, T = 1e-3, 35e-6


def _cell_boxes(m) -> np.ndarray:
    """Each cell's footprint as a shapely box (length along its axis x width)."""
    half = 0.5 * m.width
    xs = m.axis == 0
    x0 = np.where(xs, m.start[:, 0], m.start[:, 0] - half)
    x1 = np.where(xs, m.end[:, 0], m.start[:, 0] + half)
    y0 = np.where(xs, m.start[:, 1] - half, m.start[:, 1])
    y1 = np.where(xs, m.start[:, 1] + half, m.end[:, 1])
    return shapely.box(x0, y0, x1, y1)


def test_rectangle_with_hole_is_tiled_exactly() -> None:
    """A rectilinear pour with a hole: the x-cells' footprints cover the copper
    exactly (their union area equals the polygon's area from shapely and they do
    not overlap: the sum of areas equals it too); the same for the y-cells. The
    hole's corners are grid lines, so nothing is lost."""
    poly = Polygon([(0, 0), (20e-3, 0), (20e-3, 10e-3), (0, 10e-3)],
                   [[(6e-3, 3e-3), (13e-3, 3e-3), (13e-3, 5.5e-3), (6e-3, 5.5e-3)]])
    m = mesh_polygon(poly, z=Z, thickness=T, cell=1e-3)
    boxes = _cell_boxes(m)
    for ax in (0, 1):
        sel = boxes[m.axis == ax]
        assert shapely.area(sel).sum() == pytest.approx(poly.area, rel=1e-9)
        assert shapely.union_all(sel).area == pytest.approx(poly.area, rel=1e-9)
    # every cell lies on the copper, none crosses the hole
    assert np.all(shapely.covered_by(boxes, poly.buffer(1e-12)))
    assert np.all(m.start[:, 2] == Z)
    assert np.all(np.linalg.norm(m.end - m.start, axis=1) > 0)


def test_cells_join_adjacent_nodes() -> None:
    """Each cell runs from its from-node to its to-node along one axis (+x or +y)."""
    m = mesh_polygon(box(0, 0, 5e-3, 3e-3), z=Z, thickness=T, cell=1e-3)
    a, b = m.node_xy[m.node_from], m.node_xy[m.node_to]
    xs = m.axis == 0
    np.testing.assert_array_equal(a[xs, 0], m.start[xs, 0])
    np.testing.assert_array_equal(b[xs, 0], m.end[xs, 0])
    np.testing.assert_array_equal(a[~xs, 1], m.start[~xs, 1])
    np.testing.assert_array_equal(b[~xs, 1], m.end[~xs, 1])
    assert np.all(b[xs, 0] > a[xs, 0]) and np.all(b[~xs, 1] > a[~xs, 1])


def test_slot_cuts_the_cells_across_it() -> None:
    """A narrow slot (0.2 mm, narrower than the fine cell) across the pour: no
    cell crosses it, so the only paths go around its ends."""
    slot = box(9.9e-3, 2e-3, 10.1e-3, 8e-3)
    poly = Polygon(box(0, 0, 20e-3, 10e-3).exterior.coords, [slot.exterior.coords])
    m = mesh_polygon(poly, z=Z, thickness=T, cell=1e-3)
    lines = shapely.linestrings(np.stack([m.start[:, :2], m.end[:, :2]], axis=1))
    assert not np.any(shapely.crosses(lines, slot) | shapely.within(lines, slot))
    # a cut line through the slot's middle meets x-cells only above and below it
    xs = (m.axis == 0) & (m.start[:, 0] < 10e-3) & (m.end[:, 0] > 10e-3)
    y = m.start[xs, 1]
    assert np.all((y <= 2e-3) | (y >= 8e-3))
    assert m.width[xs].sum() == pytest.approx(4e-3, rel=1e-9)


def test_grading_toward_edges_and_points() -> None:
    """Spacing is the fine size (a quarter of the cell by default) at a feature and
    at most the cell size everywhere; every feature is a grid line."""
    g = grid_lines(0.0, 20e-3, [7e-3], 1e-3, FINE_RATIO * 1e-3)
    d = np.diff(g)
    assert np.all(d <= 1e-3 * (1 + 1e-9))
    assert d[0] <= 0.25e-3 * 1.05 and d[-1] <= 0.25e-3 * 1.05
    k = int(np.argmin(np.abs(g - 7e-3)))
    assert g[k] == 7e-3
    assert max(d[k - 1], d[k]) <= 0.25e-3 * 1.05
    assert np.all(d[1:] / d[:-1] < 1.8) and np.all(d[:-1] / d[1:] < 1.8)


def test_refine_point_and_nearest_node() -> None:
    """A refinement point is a node; nearest_node finds it; a via's disc covers it."""
    m = mesh_polygon(box(0, 0, 10e-3, 10e-3), z=Z, thickness=T, cell=1e-3,
                     refine=[(3.3e-3, 6.7e-3)])
    k = m.nearest_node((3.31e-3, 6.69e-3))
    np.testing.assert_array_equal(m.node_xy[k], [3.3e-3, 6.7e-3])
    assert k in m.nodes_covered(Point(3.3e-3, 6.7e-3).buffer(0.15e-3)).tolist()
    edge = m.nodes_covered(LineString([(0, 0), (0, 10e-3)]))
    assert np.all(m.node_xy[edge, 0] == 0) and edge.size == np.sum(m.gx[0] == m.node_xy[:, 0])


def test_slanted_edge_follows_within_a_cell() -> None:
    """A triangle: the x-cells cover its area to within the staircase error of one
    fine cell along the slanted edge (bound: edge length x cell, worked by hand)."""
    tri = Polygon([(0, 0), (10e-3, 0), (0, 10e-3)])
    m = mesh_polygon(tri, z=Z, thickness=T, cell=0.5e-3)
    area = shapely.area(_cell_boxes(m)[m.axis == 0]).sum()
    assert abs(area - tri.area) < np.hypot(10e-3, 10e-3) * 0.5e-3
    assert np.all(shapely.covered_by(shapely.points(m.node_xy), tri))


def test_mesh_pour_uses_layer_and_cell() -> None:
    """A pour meshes at its layer's mid-plane with its layer's thickness and cell."""
    layer = Layer("gnd", z=1.2e-3, thickness=35e-6, plane="0")
    pour = Pour(net="0", layer="gnd", outline=((0, 0), (4e-3, 0), (4e-3, 2e-3), (0, 2e-3)),
                holes=(), cell=0.5e-3, index=3)
    m = mesh_pour(pour, layer)
    assert m.z == pytest.approx(1.2175e-3) and m.thickness == 35e-6
    assert np.max(np.diff(m.gx)) <= 0.5e-3 * (1 + 1e-9)
    arrays = m.arrays(node_offset=7)
    assert arrays.node_from.min() >= 7 and not arrays.round.any()
    with pytest.raises(RoutesError, match="cell sizes must be positive"):
        mesh_polygon(pour.polygon, z=0.0, thickness=T, cell=-1.0)
