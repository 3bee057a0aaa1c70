"""Picture of a loop's magnetic near field: |B| on a plane above (or below)
the board, per 1 A of loop current, as a heat map under the outlines of the
copper.

The field is the Biot-Savart field of the loop's segment currents (their
division as the loop solver finds it, images in the return planes included),
:func:`parasite.field.field_map`; the parts' own current paths (between
their terminals) are not in it. matplotlib is optional and imported only here.
The picture's heat map has the SVG id ``fieldmap``. An estimate for comparing
layouts, not a measurement.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from parasite.field.nearmap import FieldMap, copper_extent, field_map, height_plane
from parasite.plot import PlotFormat, bar_outline, render, require_matplotlib

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from geometry.model import CopperGraph
    from parasite.loops import LoopResult


def loop_field_map(graph: CopperGraph, loop: LoopResult, height: float, *, below: bool = False,
                   n: int = 100) -> FieldMap:
    """|B| map (T per 1 A of loop current) of ``loop`` on an ``n`` x ``n`` grid over
    the copper, at ``height`` (m) above its top (or under its bottom, ``below``)."""
    arrays = graph.arrays
    z = height_plane(arrays, height, below=below)
    currents = loop.segment_currents(len(arrays))
    if not np.any(currents.imag):
        currents = currents.real
    return field_map(arrays, currents, z, nx=n, ny=n, extent=copper_extent(arrays, 0.1 * _span(graph)))


def _span(graph: CopperGraph) -> float:
    pts = np.vstack([graph.arrays.start, graph.arrays.end])
    return float(np.max(np.ptp(pts[:, :2], axis=0)))


def field_figure(graph: CopperGraph, loop: LoopResult, height: float, *, below: bool = False,
                 n: int = 100) -> Figure:
    """The board from above: |B| (uT per 1 A, logarithmic shades) of ``loop`` at
    ``height`` (m), under the outlines of every trace and via."""
    require_matplotlib()
    from matplotlib.colors import LogNorm
    from matplotlib.figure import Figure
    from matplotlib.patches import Circle, Polygon

    fmap = loop_field_map(graph, loop, height, below=below, n=n)
    b = 1e6 * fmap.magnitude  # uT per A
    top = float(b.max()) if b.size and b.max() > 0 else 1.0
    norm = LogNorm(vmin=top * 1e-2, vmax=top)
    fig = Figure(figsize=(7.5, 6.0), dpi=150, layout="constrained")
    ax = fig.subplots()
    mesh = ax.pcolormesh(1e3 * fmap.x, 1e3 * fmap.y, np.clip(b, top * 1e-2, None), norm=norm,
                         cmap="magma", shading="nearest")
    mesh.set_gid("fieldmap")
    fig.colorbar(mesh, ax=ax, label="|B| (uT per 1 A of loop current)")
    for s in graph.segments:
        if s.kind == "probe":
            continue
        if s.kind == "via":
            patch: Any = Circle((1e3 * s.start[0], 1e3 * s.start[1]), 1e3 * s.width / 2,
                                fill=False, lw=0.6, ec="0.2")
        else:
            outline = bar_outline(s.start[:2], s.end[:2], s.width)
            patch = Polygon(1e3 * outline, closed=True, fill=False, lw=0.6, ec="0.2")
        patch.set_gid(f"segment:{s.id}")
        ax.add_patch(patch)
    side = "below the bottom of" if below else "above the top of"
    ax.set_title(f"loop {loop.name!r}: |B| at {1e3 * height:g} mm {side} the copper "
                 f"(peak {top:.3g} uT per A)", fontsize=9)
    ax.set_xlabel("x (mm)")
    ax.set_ylabel("y (mm)")
    ax.set_aspect("equal")
    fig.suptitle("Biot-Savart estimate from the loop's segment currents; parts' own current "
                 "paths not included; confirm by measurement", fontsize=7, color="0.35")
    return fig


def field_plot_bytes(graph: CopperGraph, loop: LoopResult, height: float, fmt: PlotFormat, *,
                     below: bool = False, n: int = 100) -> bytes:
    """:func:`field_figure` rendered as ``fmt`` bytes."""
    return render(field_figure(graph, loop, height, below=below, n=n), fmt)
