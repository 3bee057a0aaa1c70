"""Pictures of the copper: the board from above, and the coupling matrix.

The board view draws every segment to scale (traces as the rectangular bars
they are modelled as, vias as discs of their diameter), one colour per layer; the
shade of a segment shows a value per segment: its term of one loop's
inductance (:mod:`parasite.loops`) or its partial self inductance. Layers are
coloured in stack order from the project's colour-blind-safe palette and named
in the legend (:mod:`parasite.plot_style`); vias have their own scale; probe
leads are drawn in one colour and named. Pins carry their terminal's name
(close pins: a column of labels with leaders); a scale bar gives the size. Return planes are ideal and
are not drawn (the subtitle names them); with a loop, each pour (meshed copper)
is drawn as a heat map of the loop's current density at the loop's frequency,
arrows along the current. The coupling view is a heat map of
``k_ij = L_ij / sqrt(L_ii L_jj)``, segments ordered by net.

matplotlib is an optional dependency, imported only here and only when a
picture is asked for; no display is needed (the figure is drawn off-screen and
returned as PNG or SVG bytes). Each drawn segment's artist has the id
``segment:<id>`` and each pin label ``pin:<terminal>``, so that SVG output can
be searched.
"""

from __future__ import annotations

import io
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Literal

import numpy as np

from geometry.model import CopperGraph, Segment
from parasite.errors import ParasiteError

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from parasite.loops import LoopResult

PlotFormat = Literal["png", "svg"]
PLOT_FORMATS: tuple[str, ...] = ("png", "svg")

# Layers: the project's palette in stack order (parasite.plot_style). Vias have
# a grey scale of their own range; the upper part of it, so that a via with no
# share stays visible. Probe leads: one fixed colour, on no scale.
VIA_CMAP = "Greys"
SHADE_LOW, SHADE_HIGH = 0.22, 0.95
DPI = 150


class PlotDependencyError(ParasiteError):
    """matplotlib, which pictures need, is not installed."""


def require_matplotlib() -> Any:
    """The matplotlib module, or :class:`PlotDependencyError` saying how to install it."""
    try:
        import matplotlib
    except ImportError as exc:
        raise PlotDependencyError(
            "pictures need matplotlib, which is not installed; install it with "
            "pip install 'parasite[plot]' (or pip install matplotlib)",
            file="parasite plot",
        ) from exc
    return matplotlib


def plot_format(path: str) -> PlotFormat:
    """The picture format from a file name's extension (``.png`` or ``.svg``,
    any case); ValueError names what is accepted."""
    suffix = path.rsplit(".", 1)[-1].lower() if "." in path else ""
    if suffix == "png":
        return "png"
    if suffix == "svg":
        return "svg"
    raise ValueError(f"{path!r}: the picture format comes from the extension; use .png or .svg")


# ---------------------------------------------------------------------------
# Geometry of the drawing (pure numpy)


def bar_outline(start: Sequence[float], end: Sequence[float], width: float) -> np.ndarray:
    """Corners (4 x 2) of a bar of ``width`` from ``start`` to ``end`` (x, y),
    counter-clockwise: the rectangle the segment is modelled as, seen from
    above (same unit as the input)."""
    p0 = np.asarray(start[:2], dtype=float)
    p1 = np.asarray(end[:2], dtype=float)
    d = p1 - p0
    length = float(np.hypot(d[0], d[1]))
    u = d / length if length > 0 else np.array([1.0, 0.0])
    n = 0.5 * width * np.array([-u[1], u[0]])
    return np.array([p0 - n, p1 - n, p1 + n, p0 + n])


def nice_length(span: float) -> float:
    """A round length (1, 2 or 5 times a power of ten) of about a fifth of ``span``."""
    if span <= 0 or not math.isfinite(span):
        return 1.0
    target = span / 5.0
    power = 10.0 ** math.floor(math.log10(target))
    for m in (5.0, 2.0, 1.0):
        if m * power <= target:
            return m * power
    return power


def _format_length_mm(mm: float) -> str:
    return f"{mm * 1e3:g} um" if mm < 1 else f"{mm:g} mm"


def coupling_matrix(L: np.ndarray) -> np.ndarray:
    """k_ij = L_ij / sqrt(L_ii L_jj) (dimensionless; the diagonal is 1)."""
    d = np.sqrt(np.diag(L))
    return np.asarray(L / np.outer(d, d))


def net_order(graph: CopperGraph) -> np.ndarray:
    """Segment indices ordered by net (the graph's net order), then by index."""
    net = np.asarray(graph.arrays.net_index)
    return np.lexsort((np.arange(len(net)), net))


# ---------------------------------------------------------------------------
# Figures


def _board_extent(graph: CopperGraph) -> tuple[float, float, float, float]:
    """x0, x1, y0, y1 in mm of the board's copper and pins, with a margin
    (probe leads in space are drawn but do not widen the view)."""
    xs: list[float] = []
    ys: list[float] = []
    for s in graph.segments:
        if s.kind == "probe":
            continue
        r = s.width / 2
        for p in (s.start, s.end):
            xs += [p[0] - r, p[0] + r]
            ys += [p[1] - r, p[1] + r]
    for pn in graph.pins:
        xs.append(pn.pin.at[0])
        ys.append(pn.pin.at[1])
    if not xs:
        return (0.0, 1.0, 0.0, 1.0)
    x0, x1, y0, y1 = 1e3 * min(xs), 1e3 * max(xs), 1e3 * min(ys), 1e3 * max(ys)
    margin = 0.08 * max(x1 - x0, y1 - y0, 1e-3)
    return (x0 - margin, x1 + margin, y0 - margin, y1 + margin)


def _layer_rank(graph: CopperGraph) -> dict[str, int]:
    """Drawing order of the trace layers: lowest first, so the top sits on top."""
    layers = [ly for ly in graph.routes.layers.values() if ly.plane is None]
    return {ly.name: k for k, ly in enumerate(sorted(layers, key=lambda ly: ly.z))}


def _truncated(cmap: Any) -> Any:
    from matplotlib.colors import ListedColormap

    return ListedColormap(cmap(np.linspace(SHADE_LOW, SHADE_HIGH, 256)))


def _draw_board(ax: Axes, graph: CopperGraph, values: np.ndarray, vmax: float,
                value_label: str, fig: Figure) -> list[Any]:
    """Draw the board on ``ax``; returns the labels to place last
    (:func:`parasite.plot_labels.place_labels`)."""
    import matplotlib as mpl
    from matplotlib.colors import Normalize
    from matplotlib.patches import Circle, Polygon
    from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

    from parasite.plot_labels import Label
    from parasite.plot_style import PROBE_COLOUR, draw_keys, layer_cmap, layer_colours

    norm = Normalize(vmin=0.0, vmax=vmax if vmax > 0 else 1.0)
    trace_layers = [ly for ly in graph.routes.layers.values() if ly.plane is None]
    hues = layer_colours([(ly.name, ly.z) for ly in trace_layers])
    file_layers = sorted((ly.name for ly in trace_layers), key=lambda n: list(hues).index(n))
    cmaps = {name: layer_cmap(hues[name]) for name in file_layers}
    via_cmap = _truncated(mpl.colormaps[VIA_CMAP])
    via_values = [values[s.index] for s in graph.segments if s.kind == "via"]
    via_max = max(via_values, default=0.0)
    via_norm = Normalize(vmin=0.0, vmax=via_max if via_max > 0 else 1.0)  # the vias' own range
    rank = _layer_rank(graph)
    top_rank = max(rank.values(), default=0)

    def shade(cmap: Any, v: float) -> Any:
        return cmap(norm(max(v, 0.0)))

    traces = [s for s in graph.segments if s.kind == "trace"]
    traces.sort(key=lambda s: (rank.get(s.layer or "", 0), s.index))
    # Where trace segments meet at an angle, a disc under them fills the outer
    # corner of the bend (collinear joints need none).
    joints: dict[int, list[Segment]] = {}
    for s in traces:
        joints.setdefault(s.node_from, []).append(s)
        joints.setdefault(s.node_to, []).append(s)
    for node, meeting in sorted(joints.items()):
        u = np.array([np.subtract(m.end[:2], m.start[:2]) / max(m.length, 1e-300)
                      for m in meeting])
        cross = np.abs(u[:, None, 0] * u[None, :, 1] - u[:, None, 1] * u[None, :, 0])
        if len(meeting) < 2 or cross.max() < 1e-6:
            continue
        layer = meeting[0].layer or ""
        p = graph.nodes[node].point
        v = max(values[m.index] for m in meeting)
        d = min(m.width for m in meeting)
        ax.add_patch(Circle((1e3 * p[0], 1e3 * p[1]), 1e3 * d / 2,
                            facecolor=shade(cmaps.get(layer, via_cmap), v),
                            edgecolor="none", zorder=0.5 + rank.get(layer, 0)))
    edge = 0.3 if len(traces) <= 300 else 0.0  # outlines would hatch a dense board
    for s in traces:
        cmap = cmaps.get(s.layer or "", via_cmap)
        outline = 1e3 * bar_outline(s.start, s.end, s.width)
        z = 1.0 + rank.get(s.layer or "", 0)
        ax.add_patch(Polygon(outline, closed=True, facecolor=shade(cmap, values[s.index]),
                             edgecolor=cmap(1.0), linewidth=edge, zorder=z,
                             gid=f"segment:{s.id}"))
        if rank.get(s.layer or "", 0) < top_rank:  # copper under other layers: dashed outline on top
            ax.add_patch(Polygon(outline, closed=True, fill=False, edgecolor=cmap(1.0),
                                 linewidth=0.5, linestyle=(0, (3, 2)), zorder=10.0))
    round_segments: list[Segment] = [s for s in graph.segments if s.kind == "via"]
    round_segments.sort(key=lambda s: (values[s.index], s.index))  # largest share on top
    for s in round_segments:
        ax.add_patch(Circle((1e3 * s.start[0], 1e3 * s.start[1]), 1e3 * s.width / 2,
                            facecolor=via_cmap(via_norm(max(values[s.index], 0.0))), edgecolor="black",
                            linewidth=0.5, zorder=20.0, gid=f"segment:{s.id}"))
    lead_ends: dict[str, Segment] = {}
    for s in graph.segments:
        if s.kind == "probe":
            ax.plot([1e3 * s.start[0], 1e3 * s.end[0]], [1e3 * s.start[1], 1e3 * s.end[1]],
                    color=PROBE_COLOUR, linewidth=1.3, linestyle="-.",
                    zorder=21.0, gid=f"segment:{s.id}")
            lead_ends[s.source] = s  # the last piece of each lead
    probes = {f"probe[{p.index}]": p.name for p in graph.routes.probes}
    labels: list[Label] = []
    for source, s in lead_ends.items():  # one label per probe, at its tip lead's end
        entry, _, lead = source.partition(".")
        if lead == "tip_lead":
            labels.append(Label(f"probe {probes.get(entry, entry)}", (1e3 * s.end[0], 1e3 * s.end[1]),
                                f"probe:{probes.get(entry, entry)}", PROBE_COLOUR, 7.0))

    x0, x1, y0, y1 = _board_extent(graph)
    at = np.array([[1e3 * pn.pin.at[0], 1e3 * pn.pin.at[1]] for pn in graph.pins]).reshape(-1, 2)
    for pn, (x, y) in zip(graph.pins, at, strict=True):
        ax.plot([x], [y], marker="o", markersize=3.5, color="black", zorder=30.0)
        labels.append(Label(pn.pin.terminal, (float(x), float(y)), f"pin:{pn.pin.terminal}"))

    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal")
    ax.set_xlabel("x (mm)")
    ax.set_ylabel("y (mm)")
    bar = nice_length(x1 - x0)
    ax.add_artist(AnchoredSizeBar(ax.transData, bar, _format_length_mm(bar), loc="lower right",
                                  pad=0.4, borderpad=0.5, sep=3, frameon=True, size_vertical=0,
                                  fontproperties={"size": 8}))

    drawn = [name for name in file_layers if any(s.layer == name for s in traces)]
    draw_keys(fig, ax, [(name, hues[name], cmaps[name]) for name in drawn], norm,
              (via_cmap, via_norm) if round_segments else None, bool(lead_ends), value_label)
    return labels


def _draw_couplings(ax: Axes, graph: CopperGraph, L: np.ndarray, fig: Figure) -> None:
    order = net_order(graph)
    k = coupling_matrix(L)[np.ix_(order, order)]
    np.fill_diagonal(k, np.nan)  # the diagonal (1) would hide the structure
    finite = np.abs(k[np.isfinite(k)])
    kmax = float(finite.max()) if finite.size else 1.0
    kmax = kmax if kmax > 0 else 1.0
    import matplotlib as mpl

    cmap = mpl.colormaps["RdBu_r"].with_extremes(bad="0.85")
    image = ax.imshow(k, cmap=cmap, vmin=-kmax, vmax=kmax, interpolation="nearest",
                      origin="upper", gid="couplings")
    net = np.asarray(graph.arrays.net_index)[order]
    edges = np.flatnonzero(np.diff(net)) + 1
    for e in edges:
        ax.axhline(e - 0.5, color="black", linewidth=0.6)
        ax.axvline(e - 0.5, color="black", linewidth=0.6)
    starts = np.concatenate([[0], edges])
    ends = np.concatenate([edges, [len(net)]])
    n = len(order)
    if n <= 40:
        from parasite.plot_style import segment_label

        labels = [segment_label(graph.segments[int(i)].id) for i in order]
        ax.set_xticks(np.arange(n), labels, rotation=90, fontsize=7)
        ax.set_yticks(np.arange(n), labels, fontsize=7)
    else:
        centres = (starts + ends - 1) / 2.0
        from parasite.plot_style import net_label

        names = [net_label(graph.nets[int(net[s])]) for s in starts]
        ax.set_xticks(centres, names, rotation=90, fontsize=7)
        ax.set_yticks(centres, names, fontsize=7)
    ax.set_title("coupling coefficient k, segments by net", fontsize=9)
    cb = fig.colorbar(image, ax=ax, fraction=0.046, pad=0.04)
    cb.set_label("k = M / sqrt(La Lb)", fontsize=8)
    cb.ax.tick_params(labelsize=7)


def board_figure(
    graph: CopperGraph,
    L: np.ndarray,
    *,
    loop: LoopResult | None = None,
    couplings: bool = False,
) -> Figure:
    """The board from above, shaded by ``loop``'s segment terms (or, without a
    loop, by partial self inductance), with the coupling heat map beside it when
    ``couplings``. ``L`` is the segments' partial inductance matrix (H)."""
    require_matplotlib()
    from matplotlib.figure import Figure

    L = np.asarray(L, dtype=float)
    n = len(graph.segments)
    if loop is not None:
        index = {s.id: s.index for s in graph.segments}
        values = np.zeros(n)
        for sid, term in loop.contributors:
            values[index[sid]] = term
        value_label = "term of the loop inductance (nH)"
        limit = "" if loop.limit is None else (
            f", limit {1e9 * loop.limit:.3g} nH" + ("" if loop.within_limit else ", OVER"))
        title = f"loop {loop.name!r}: {1e9 * loop.inductance:.3g} nH{limit}"
    else:
        values = np.diag(L).copy() if n else np.zeros(0)
        value_label = "partial self inductance (nH)"
        title = "partial self inductance of each segment"
    values = 1e9 * values  # nH on the picture
    vmax = float(values.max()) if n and values.max() > 0 else 1.0

    x0, x1, y0, y1 = _board_extent(graph)
    aspect = (y1 - y0) / (x1 - x0) if x1 > x0 else 1.0
    board_w = 7.5
    board_h = float(np.clip(board_w * aspect, 3.5, 9.0)) + 0.9
    width = board_w + (6.0 if couplings else 0.0)
    fig = Figure(figsize=(width, max(board_h, 5.5 if couplings else 0.0)), dpi=DPI,
                 layout="constrained")
    if couplings:
        ax, ax_k = fig.subplots(1, 2, gridspec_kw={"width_ratios": [board_w, 6.0]})
    else:
        ax = fig.subplots()
    labels = _draw_board(ax, graph, values, vmax, value_label, fig)
    if loop is not None and loop.currents is not None and any(s.kind == "cell" for s in graph.segments):
        draw_pour_currents(ax, graph, loop, fig)
    planes = ", ".join(f"{p.layer} (net {p.net})" for p in graph.planes)
    subtitle = f"\nreturn plane{'s' if len(graph.planes) > 1 else ''}, not drawn: {planes}" \
        if planes else ""
    ax.set_title(title + subtitle, fontsize=9)
    if couplings and n:
        _draw_couplings(ax_k, graph, L, fig)
    elif couplings:
        ax_k.set_axis_off()
    fig.suptitle("estimates from closed-form formulas; confirm by measurement", fontsize=7,
                 color="0.35")
    from parasite.plot_labels import place_labels

    place_labels(fig, ax, labels)  # last: the layout is done and then frozen
    return fig


POUR_CMAP = "magma_r"
POUR_GRID = 160  # samples of the heat map along the longer side of a pour
POUR_ARROWS = 24  # arrows along the longer side of a pour


@dataclass(frozen=True)
class PourDensity:
    """A loop's sheet current density in one pour on a regular grid (SI):
    ``x`` (nx,), ``y`` (ny,) m; ``jx``, ``jy`` (ny, nx) A/m per 1 A of loop
    current, complex phasors (NaN off the copper)."""

    source: str
    x: np.ndarray
    y: np.ndarray
    jx: np.ndarray
    jy: np.ndarray

    @property
    def magnitude(self) -> np.ndarray:
        """|J| (A/m): sqrt(|jx|^2 + |jy|^2)."""
        return np.sqrt(np.abs(self.jx) ** 2 + np.abs(self.jy) ** 2)


def pour_current_density(graph: CopperGraph, currents: np.ndarray,
                         samples: int = POUR_GRID) -> list[PourDensity]:
    """Sheet current density (A/m) of every pour from the cells' currents
    (``currents``: (N,) per segment, A): each cell's current over its width,
    x-cells giving ``jx`` and y-cells ``jy`` at their centres, linearly
    interpolated (scipy's ``griddata``) onto a regular grid over the pour and
    masked to its copper (shapely)."""
    import shapely
    from scipy.interpolate import griddata

    currents = np.asarray(currents)
    out = []
    for pour in graph.routes.pours:
        ks = [s.index for s in graph.segments if s.kind == "cell" and s.source == pour.key]
        if not ks:
            continue
        idx = np.asarray(ks)
        a = graph.arrays
        centre = 0.5 * (a.start[idx, :2] + a.end[idx, :2])
        along_x = np.abs(a.end[idx, 0] - a.start[idx, 0]) > 0
        j = currents[idx] / a.width[idx]
        x0, y0, x1, y1 = pour.polygon.bounds
        step = max(x1 - x0, y1 - y0) / samples
        x = np.arange(x0 + step / 2, x1, step)
        y = np.arange(y0 + step / 2, y1, step)
        gx, gy = np.meshgrid(x, y)
        inside = shapely.covered_by(shapely.points(gx, gy), pour.polygon)
        comps = []
        for mask in (along_x, ~along_x):
            if mask.sum() >= 3:
                re = griddata(centre[mask], j[mask].real, (gx, gy), method="linear", fill_value=0.0)
                im = griddata(centre[mask], np.asarray(j[mask]).imag, (gx, gy), method="linear",
                              fill_value=0.0)
                comps.append(re + 1j * im)
            else:
                comps.append(np.zeros(gx.shape, dtype=complex))
        jx, jy = (np.where(inside, c, np.nan) for c in comps)
        out.append(PourDensity(source=pour.key, x=x, y=y, jx=jx, jy=jy))
    return out


def draw_pour_currents(ax: Axes, graph: CopperGraph, loop: LoopResult, fig: Figure) -> None:
    """Heat map of ``loop``'s sheet current density |J| (A/m per A) in every pour at
    the loop's frequency, with arrows along the real part of J (the current's
    direction at the phase of the loop current), under the traces."""
    from matplotlib.colors import Normalize

    dens = pour_current_density(graph, loop.currents)
    if not dens:
        return
    vmax = max(float(np.nanmax(d.magnitude)) if np.isfinite(d.magnitude).any() else 0.0
               for d in dens) or 1.0
    norm = Normalize(vmin=0.0, vmax=vmax)
    mesh = None
    for d in dens:
        mesh = ax.pcolormesh(1e3 * d.x, 1e3 * d.y, d.magnitude, cmap=POUR_CMAP, norm=norm,
                             shading="nearest", zorder=0.2, gid=f"pour:{d.source}")
        every = max(1, round(max(d.x.size, d.y.size) / POUR_ARROWS))
        sx, sy = slice(every // 2, None, every), slice(every // 2, None, every)
        u, v = d.jx.real[sy, sx], d.jy.real[sy, sx]
        size = np.hypot(u, v)
        shown = size > 0.02 * vmax  # arrows of one length: the heat map gives the size
        u = np.where(shown, u / np.where(shown, size, 1.0), np.nan)
        v = np.where(shown, v / np.where(shown, size, 1.0), np.nan)
        ax.quiver(1e3 * d.x[sx], 1e3 * d.y[sy], u, v, color="white", alpha=0.8, zorder=0.3,
                  angles="xy", pivot="mid", width=0.002, gid=f"pour-arrows:{d.source}")
    if mesh is not None:
        cb = fig.colorbar(mesh, ax=ax, fraction=0.025, pad=0.015, aspect=30)
        f = "DC limit" if not loop.frequency else f"{loop.frequency:.3g} Hz"
        cb.set_label(f"pour current density (A/m per A), {f}", fontsize=8)
        cb.ax.tick_params(labelsize=7)


def render(fig: Figure, fmt: PlotFormat) -> bytes:
    """The figure as PNG or SVG bytes (deterministic: no dates, fixed ids)."""
    mpl = require_matplotlib()
    buf = io.BytesIO()
    with mpl.rc_context({"svg.hashsalt": "parasite", "svg.fonttype": "none"}):
        if fmt == "svg":
            fig.savefig(buf, format="svg", metadata={"Date": None})
        else:
            fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None})
    return buf.getvalue()


def plot_bytes(
    graph: CopperGraph,
    L: np.ndarray,
    fmt: PlotFormat,
    *,
    loop: LoopResult | None = None,
    couplings: bool = False,
) -> bytes:
    """:func:`board_figure` rendered as ``fmt`` bytes."""
    return render(board_figure(graph, L, loop=loop, couplings=couplings), fmt)
