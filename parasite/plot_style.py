"""The look of the board pictures (:mod:`parasite.plot`): the project's layer
palette, names that read as names, and pin labels that do not overlap.

Palette: layers take colours in stack order (top first) from a sequence of
hues that stay distinct under the common colour-vision deficiencies (the
Okabe-Ito set: M. Okabe and K. Ito, "Color Universal Design (CUD): how to make
figures and presentations that are friendly to colorblind people", 2008),
ordered here so that neighbouring layers differ in lightness as well as hue.
Each layer's shade runs from a pale tint (no share of the value) to a dark
shade of its hue (the largest share). Vias have their own grey scale, with
their own range; probe leads are drawn in one fixed colour, named, on no
scale. Labels are placed by :mod:`parasite.plot_labels`.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from typing import Any

import numpy as np

# Hues (sRGB hex), top layer first: bluish green, orange, blue, yellow,
# vermillion, sky blue, reddish purple (Okabe and Ito 2008), ordered so that
# each of the first six differs from the next by at least 12 in CIE L*.
LAYER_HUES = ("#009E73", "#E69F00", "#0072B2", "#F0E442", "#D55E00", "#56B4E9", "#CC79A7")
PROBE_COLOUR = "#222222"  # probe leads: near black, dash-dot, labelled with the probe's name
_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\Z")


def layer_cmap(hue: str) -> Any:
    """A sequential colour map for one layer: a pale tint of ``hue`` at 0, the
    hue at 0.55, a dark shade (40% black) at 1."""
    from matplotlib.colors import LinearSegmentedColormap, to_rgb

    rgb = np.array(to_rgb(hue))
    tint = 1.0 - 0.18 * (1.0 - rgb)  # 18% of the hue over white
    shade = 0.6 * rgb
    stops = [(0.0, tuple(tint)), (0.55, tuple(rgb)), (1.0, tuple(shade))]
    return LinearSegmentedColormap.from_list(f"layer {hue}", stops)


def layer_colours(layer_z: Sequence[tuple[str, float]]) -> dict[str, str]:
    """The hue of each trace layer ``(name, z in m)``: in stack order from the
    top (highest z first); the sequence repeats past seven layers."""
    order = sorted(layer_z, key=lambda nz: -nz[1])
    return {name: LAYER_HUES[k % len(LAYER_HUES)] for k, (name, _z) in enumerate(order)}


def segment_label(segment_id: str) -> str:
    """A segment id for the picture: ``<net>.<n>`` where the net's name reads
    as a number gets the net spelt out, so that ``0.4`` (segment 4 of net 0)
    is not read as a number: ``gnd.4`` for net 0, ``net12.3`` for net 12."""
    net, dot, n = segment_id.rpartition(".")
    if not dot or not _NUMBER.match(net):
        return segment_id
    return f"{net_label(net)}.{n}"


def net_label(net: str) -> str:
    """A net's name for the picture: ``gnd`` for net 0, ``net12`` for a net
    named by a number, other names as they are."""
    if not _NUMBER.match(net):
        return net
    return "gnd" if net == "0" else f"net{net}"


def draw_keys(fig: Any, ax: Any, layers: Sequence[tuple[str, str, Any]], norm: Any,
              vias: tuple[Any, Any] | None, probes: bool, value_label: str) -> None:
    """The colour bars and the legend of the board view: one bar per drawn
    layer ``(name, hue, colour map)`` on the common ``norm``; the vias' own bar
    ``(colour map, norm)`` (a via's share is often a hundredth of a trace's);
    a legend naming the layers top first, the vias and the probe leads."""
    from matplotlib.cm import ScalarMappable
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch

    if vias is not None:
        cb = fig.colorbar(ScalarMappable(norm=vias[1], cmap=vias[0]), ax=ax, fraction=0.025,
                          pad=0.015, aspect=30)
        cb.ax.set_title("vias", fontsize=8, rotation=90)
        cb.set_label(value_label.replace("(nH)", "of vias (nH)"), fontsize=8)
        cb.ax.tick_params(labelsize=7)
    # Each new colour bar goes between the axes and the bars before it: add them
    # from the right, so they read in stack order, with the scale on the rightmost.
    for k, (name, _hue, cmap) in enumerate(reversed(layers)):
        cb = fig.colorbar(ScalarMappable(norm=norm, cmap=cmap), ax=ax, fraction=0.025, pad=0.015,
                          aspect=30)
        cb.ax.set_title(name, fontsize=8, rotation=90)
        if k == 0:
            cb.set_label(value_label, fontsize=8)
            cb.ax.tick_params(labelsize=7)
        else:
            cb.ax.set_yticks([])
    handles: list[Any] = [Patch(facecolor=hue, edgecolor=cmap(1.0), label=f"layer {name}")
                          for name, hue, cmap in layers]
    if vias is not None:
        handles.append(Patch(facecolor="0.6", edgecolor="black", label="vias"))
    if probes:
        handles.append(Line2D([], [], color=PROBE_COLOUR, linestyle="-.", label="probe leads"))
    if handles:
        ax.legend(handles=handles, loc="best", fontsize=7, framealpha=0.85, title="top to bottom",
                  title_fontsize=7)
