"""Labels of the board picture placed without overlap (:mod:`parasite.plot`).

Each label (a pin's terminal, a probe's name) is tried at a list of places
around its point, in order: beside it (up right, down right, up left, down
left), then farther up or down in rows, where a thin leader line joins it to
its point. The first place whose box, measured with the figure's renderer,
stays inside the axes and overlaps neither the legend nor a label already
placed is kept (greedy, in the order given). The figure is laid out once
before, and its layout is then frozen, so that the boxes measured are the
boxes drawn.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

ROW = 11.0  # points between rows of labels
_NEAR = [(4.0, 3.0), (4.0, -13.0), (-4.0, 3.0), (-4.0, -13.0)]


@dataclass(frozen=True)
class Label:
    text: str
    at: tuple[float, float]  # data coordinates of the point labelled
    gid: str
    colour: str = "black"
    size: float = 8.0


def _places(max_rows: int = 12) -> list[tuple[float, float, bool]]:
    """(dx, dy in points, leader) candidates, nearest first."""
    out = [(dx, dy, False) for dx, dy in _NEAR]
    for k in range(1, max_rows + 1):
        for sign in (1.0, -1.0):
            dy = 3.0 + k * ROW if sign > 0 else -13.0 - k * ROW
            out += [(10.0, dy, True), (-10.0, dy, True)]
    return out


def place_labels(fig: Any, ax: Any, labels: Sequence[Label]) -> list[Any]:
    """Annotate ``ax`` with ``labels``, none overlapping another (as far as the
    candidate places allow: fewer on a crowded board); returns the
    annotations in the order given."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    canvas.draw()  # the layout, once
    fig.set_layout_engine("none")  # frozen: what is measured below is what is drawn
    renderer = canvas.get_renderer()
    frame = ax.get_window_extent(renderer)
    legend = ax.get_legend()
    if legend is not None:  # where "best" put it, kept: the labels would move it
        x0, y0 = ax.transAxes.inverted().transform(legend.get_window_extent(renderer).p0)
        legend._loc = (float(x0), float(y0))  # set_loc from matplotlib 3.8 on
    # each place tried costs a text layout: a crowded board tries fewer rows
    places = _places(12 if len(labels) <= 100 else 2 if len(labels) <= 400 else 0)
    placed = _Boxes()  # boxes (display units) of what labels must not cover
    if legend is not None:
        placed.add(legend.get_window_extent(renderer))
    out = []
    for lab in labels:
        ann = ax.annotate(
            lab.text, lab.at, xytext=_NEAR[0], textcoords="offset points", fontsize=lab.size,
            color=lab.colour, zorder=31.0, gid=lab.gid, va="bottom", ha="left",
            arrowprops={"arrowstyle": "-", "linewidth": 0.5, "color": "0.35", "shrinkA": 0,
                        "shrinkB": 2},
            bbox={"boxstyle": "round,pad=0.15", "facecolor": "white", "alpha": 0.85,
                  "linewidth": 0},
        )
        chosen = None
        for dx, dy, leader in places:
            ann.set_ha("left" if dx > 0 else "right")
            ann.xyann = (dx, dy)
            box = ann.get_window_extent(renderer)
            inside = (box.x0 >= frame.x0 and box.x1 <= frame.x1 and box.y0 >= frame.y0
                      and box.y1 <= frame.y1)
            if inside and not placed.hit(box):
                chosen = (box, leader)
                break
        if chosen is None:  # no free place: back beside the point
            ann.set_ha("left")
            ann.xyann = _NEAR[0]
            chosen = (ann.get_window_extent(renderer), False)
        box, leader = chosen
        if ann.arrow_patch is not None:  # the leader line, only for a label moved away
            ann.arrow_patch.set_visible(leader)
        placed.add(box)
        out.append(ann)
    return out


class _Boxes:
    """Boxes placed so far, tested for overlap all at once (numpy)."""

    def __init__(self) -> None:
        self.rows: list[tuple[float, float, float, float]] = []
        self.array = np.zeros((0, 4))

    def add(self, box: Any) -> None:
        self.rows.append((box.x0, box.y0, box.x1, box.y1))
        self.array = np.array(self.rows)

    def hit(self, box: Any) -> bool:
        a = self.array
        return bool(np.any((a[:, 0] < box.x1) & (box.x0 < a[:, 2]) & (a[:, 1] < box.y1)
                           & (box.y0 < a[:, 3])))


def boxes_overlap(fig: Any, gids: Sequence[str]) -> list[tuple[str, str]]:
    """Pairs of drawn texts (by gid) whose boxes overlap, after drawing ``fig``
    (for tests and checks)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    texts = [t for ax in fig.axes for t in ax.texts if t.get_gid() in set(gids)]
    boxes = [(t.get_gid(), t.get_window_extent(renderer)) for t in texts]
    return [(a, b) for i, (a, ba) in enumerate(boxes) for b, bb in boxes[i + 1:] if ba.overlaps(bb)]
