"""Test scenes for the meshed-pour physics: a trace over a meshed plane (its
return), and the same trace over the ideal infinite plane (method of images).

Geometry (SI, invented for the tests): the plane is a layer of copper
``PLANE_T`` thick whose bottom face is at z = 0; the trace, ``TRACE_W`` wide and
``TRACE_T`` thick, runs along x from 0 to ``length`` at y = 0, its centre line
``h`` above the plane's mid-plane; a round via of radius ``VIA_R`` at each end
joins it to the plane. The port is a gap between the trace's start and the top
of the via at x = 0.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from shapely.geometry import Polygon, box

from geometry.mesh import PourMesh, Size, mesh_polygon, stack_arrays
from geometry.model import Copper, SegmentArrays
from parasite.extract import inductance_matrix, resistances
from parasite.extract.pour_solve import PortSolution, solve_port

PLANE_T = 18e-6  # m
TRACE_W = 0.2e-3  # m
TRACE_T = 35e-6  # m
VIA_R = 0.15e-3  # m


def segments(start: list, end: list, width: list, thickness: list, radius: list,
             node_from: list, node_to: list, mirror_z: float = math.nan) -> SegmentArrays:
    """Hand-made segment arrays: radius > 0 marks a solid round conductor."""
    n = len(start)
    rad = np.asarray(radius, dtype=float)
    return SegmentArrays(start=np.asarray(start, float), end=np.asarray(end, float),
                         width=np.asarray(width, float), thickness=np.asarray(thickness, float),
                         round=rad > 0, radius=rad, inner_radius=np.zeros(n),
                         net_index=np.zeros(n, dtype=np.int64),
                         node_from=np.asarray(node_from, dtype=np.int64),
                         node_to=np.asarray(node_to, dtype=np.int64),
                         mirror_z=np.full(n, mirror_z))


@dataclass
class Scene:
    mesh: PourMesh
    arrays: SegmentArrays
    n_nodes: int
    plus: int
    minus: int
    n_plane: int  # the first n_plane segments are the plane's cells


def trace_over_plane(length: float, h: float, plane: Polygon, cell: Size,
                     fine: Size | None = None) -> Scene:
    """The trace and its two vias over a meshed ``plane`` polygon."""
    zp = 0.5 * PLANE_T
    zt = zp + h
    mesh = mesh_polygon(plane, z=zp, thickness=PLANE_T, cell=cell, fine=fine,
                        refine=[(0.0, 0.0), (length, 0.0)])
    m = mesh.n_nodes
    p0 = mesh.nearest_node((0.0, 0.0))
    p1 = mesh.nearest_node((length, 0.0))
    t0, t1, v0 = m, m + 1, m + 2
    copper = segments(
        start=[[0, 0, zt], [length, 0, zt], [0, 0, zp]],
        end=[[length, 0, zt], [length, 0, zp], [0, 0, zt]],
        width=[TRACE_W, 2 * VIA_R, 2 * VIA_R], thickness=[TRACE_T, 2 * VIA_R, 2 * VIA_R],
        radius=[0, VIA_R, VIA_R], node_from=[t0, t1, p0], node_to=[t1, p1, v0])
    arrays = stack_arrays([mesh.arrays(), copper])
    return Scene(mesh, arrays, m + 3, t0, v0, mesh.n_cells)


def trace_over_ideal_plane(length: float, h: float) -> tuple[SegmentArrays, int, int, int]:
    """The same trace and vias over the infinite ideal plane (images in its top face)."""
    top = PLANE_T
    zt = 0.5 * PLANE_T + h
    arrays = segments(
        start=[[0, 0, zt], [length, 0, zt], [0, 0, top]],
        end=[[length, 0, zt], [length, 0, top], [0, 0, zt]],
        width=[TRACE_W, 2 * VIA_R, 2 * VIA_R], thickness=[TRACE_T, 2 * VIA_R, 2 * VIA_R],
        radius=[0, VIA_R, VIA_R], node_from=[0, 1, 3], node_to=[1, 3, 2], mirror_z=top)
    return arrays, 4, 0, 2


def solve(arrays: SegmentArrays, n_nodes: int, plus, minus, frequency: float,
          shorts=()) -> PortSolution:
    L = inductance_matrix(arrays)
    R = resistances(arrays, Copper())
    return solve_port(arrays.node_from, arrays.node_to, n_nodes, L, R, frequency, plus, minus,
                      shorts)


def plane_box(x0: float, y0: float, x1: float, y1: float) -> Polygon:
    return box(x0, y0, x1, y1)
