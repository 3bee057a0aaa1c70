"""The ring picture keeps all its text inside the figure (a long "read at" title
once ran off both edges of the demo's picture). Reference: matplotlib's own
renderer extents of every text artist (common practice for layout checks)."""

from __future__ import annotations

import pytest

from parasite.ring.analyse import analyse_ring
from tests.boards import ROOT

DEMO = ROOT / "fixtures" / "demo"

pytestmark = pytest.mark.ngspice


def test_demo_ring_picture_text_stays_inside() -> None:
    """Demo with its measured file: every title, label, legend and note lies within
    the figure's pixel box (1 px slack for anti-aliasing)."""
    pytest.importorskip("matplotlib")
    from parasite.ring.plot import build_ring_figure

    result = analyse_ring(str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"), "sw",
                          measured_path=str(DEMO / "buck.measured.csv"))
    fig = build_ring_figure(result)
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    box = fig.bbox
    texts = list(fig.texts)  # the title (tick labels outside the view are never drawn)
    for ax in fig.axes:
        texts += [ax.title, ax._left_title, ax.xaxis.label, ax.yaxis.label, *ax.texts]
        if ax.get_legend() is not None:
            texts += ax.get_legend().get_texts()
    texts = [t for t in texts if t.get_visible() and t.get_text()]
    assert any("Ringing at" in t.get_text() for t in texts)
    for t in texts:
        e = t.get_window_extent(renderer)
        assert e.x0 >= box.x0 - 1 and e.x1 <= box.x1 + 1, (t.get_text()[:60], e, box)
        assert e.y0 >= box.y0 - 1 and e.y1 <= box.y1 + 1, (t.get_text()[:60], e, box)
