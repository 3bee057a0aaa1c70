"""Pictures of the board and of the coupling matrix (parasite.plot).

The pictures are checked by decoding the files (PNG through matplotlib's own
reader, SVG as XML) and counting what was drawn: one artist per segment, one
label per pin. Values drawn come from the extraction and the loop solver,
which their own tests check against published formulas.
"""

from __future__ import annotations

import io
import sys
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from geometry.model import (
    Copper,
    CopperGraph,
    Layer,
    Node,
    Pin,
    PinNode,
    Routes,
    Segment,
    SegmentArrays,
)
from parasite.plot import (
    PlotDependencyError,
    bar_outline,
    board_figure,
    nice_length,
    plot_bytes,
    plot_format,
)

MM = 1e-3


def hand_graph() -> CopperGraph:
    """Two layers: a 'sw' trace on top (two segments), a '0' trace on the
    bottom (one segment) joined to the top by a via, and three pins."""
    layers = {
        "top": Layer("top", 1.565 * MM, 0.035 * MM),
        "bottom": Layer("bottom", 0.0, 0.035 * MM),
    }
    zt, zb = layers["top"].mid, layers["bottom"].mid
    pts = [
        ("sw", "top", (0.0, 0.0, zt)), ("sw", "top", (20 * MM, 0.0, zt)),
        ("sw", "top", (20 * MM, 10 * MM, zt)),
        ("0", "bottom", (20 * MM, 12 * MM, zb)), ("0", "bottom", (0.0, 12 * MM, zb)),
        ("0", "top", (0.0, 12 * MM, zt)),
    ]
    nodes = tuple(Node(k, net, p, layer) for k, (net, layer, p) in enumerate(pts))

    def seg(k, net, kind, layer, a, b, width, radius=0.0):
        return Segment(index=k, id=f"{net}.{k + 1}", net=net, kind=kind, layer=layer,
                       start=nodes[a].point, end=nodes[b].point, width=width,
                       thickness=width if kind == "via" else 0.035 * MM, radius=radius,
                       inner_radius=0.0, node_from=a, node_to=b, source=f"trace[{k}]")

    segments = (
        seg(0, "sw", "trace", "top", 0, 1, 2 * MM),
        seg(1, "sw", "trace", "top", 1, 2, 2 * MM),
        seg(2, "0", "trace", "bottom", 3, 4, 3 * MM),
        seg(3, "0", "via", "top-bottom", 5, 4, 0.6 * MM, 0.3 * MM),
    )
    arrays = SegmentArrays(
        start=np.array([s.start for s in segments]), end=np.array([s.end for s in segments]),
        width=np.array([s.width for s in segments]),
        thickness=np.array([s.thickness for s in segments]),
        round=np.array([s.kind != "trace" for s in segments]),
        radius=np.array([s.radius for s in segments]), inner_radius=np.zeros(4),
        net_index=np.array([0, 0, 1, 1]), node_from=np.array([s.node_from for s in segments]),
        node_to=np.array([s.node_to for s in segments]), mirror_z=np.full(4, np.nan),
    )
    pins = (
        Pin("M1:d", "m1", "d", (0.0, 0.0), "top", 0),
        Pin("C5:1", "c5", "1", (20 * MM, 10 * MM), "top", 1),
        Pin("C5:2", "c5", "2", (0.0, 12 * MM), "top", 2),
    )
    pin_nodes = (PinNode(pins[0], "sw", 0), PinNode(pins[1], "sw", 2), PinNode(pins[2], "0", 5))
    routes = Routes(path="hand.routes.toml", units="mm", snap=1e-6, copper=Copper(),
                    layers=layers, traces=(), vias=(), pins=pins, loops=(), nets={})
    return CopperGraph(routes=routes, nets=("sw", "0"), nodes=nodes, segments=segments,
                       arrays=arrays, pins=pin_nodes, anchors={"sw": 0, "0": 5}, planes=())


def hand_L() -> np.ndarray:
    # A symmetric positive-definite matrix of plausible size (H); the pictures
    # only draw it.
    return np.array([[14e-9, 0.0, -2e-9, 0.0], [0.0, 8e-9, 0.0, 0.0],
                     [-2e-9, 0.0, 13e-9, 0.0], [0.0, 0.0, 0.0, 1e-9]])


def test_plot_format_from_the_extension():
    assert plot_format("a/b.PNG") == "png"
    assert plot_format("b.svg") == "svg"
    with pytest.raises(ValueError, match=r"'b\.pdf'.*use \.png or \.svg"):
        plot_format("b.pdf")


def test_nice_length_and_bar_outline():
    assert nice_length(47.0) == 5.0
    assert nice_length(100.0) == 20.0
    assert nice_length(0.3) == 0.05
    outline = bar_outline((0.0, 0.0), (10.0, 0.0), 2.0)
    np.testing.assert_allclose(outline, [[0, -1], [10, -1], [10, 1], [0, 1]], atol=1e-12)
    outline = bar_outline((1.0, 1.0), (1.0, 4.0), 0.5)
    np.testing.assert_allclose(outline, [[1.25, 1], [1.25, 4], [0.75, 4], [0.75, 1]], atol=1e-12)


def _svg_ids(data: bytes) -> list[str]:
    root = ET.fromstring(data)
    return [el.get("id", "") for el in root.iter()]


def test_svg_has_one_artist_per_segment_and_a_label_per_pin():
    graph = hand_graph()
    data = plot_bytes(graph, hand_L(), "svg")
    ids = _svg_ids(data)
    assert sorted(i for i in ids if i.startswith("segment:")) == [
        "segment:0.3", "segment:0.4", "segment:sw.1", "segment:sw.2"]
    assert sorted(i for i in ids if i.startswith("pin:")) == ["pin:C5:1", "pin:C5:2", "pin:M1:d"]
    text = data.decode()
    for label in ("M1:d", "C5:1", "C5:2", "partial self inductance"):
        assert label in text
    assert "10 mm" in text or "5 mm" in text  # the scale bar


def test_png_decodes_with_the_layer_colours():
    """Each layer is drawn in its own hue of the palette, in stack order from
    the top: the top layer's largest segment (14 nH, the scale's top) in the
    darkest shade of the first hue, the bottom layer's (13 nH) in the second
    hue's shade at 13/14 of the scale; each colour covers many pixels (within
    3/255 per channel: PNG rounding and anti-aliased edges)."""
    import matplotlib.image as mpimg

    from parasite.plot_style import LAYER_HUES, layer_cmap

    graph = hand_graph()
    data = plot_bytes(graph, hand_L(), "png", couplings=True)
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    image = mpimg.imread(io.BytesIO(data), format="png")
    assert image.ndim == 3 and image.shape[0] > 500 and image.shape[1] > 1500
    rgb = image[..., :3].reshape(-1, 3)
    top = np.array(layer_cmap(LAYER_HUES[0])(1.0)[:3])
    bottom = np.array(layer_cmap(LAYER_HUES[1])(13 / 14)[:3])
    for colour in (top, bottom):
        assert np.sum(np.all(np.abs(rgb - colour) < 3 / 255, axis=1)) > 1000


def test_palette_in_stack_order_and_distinct_in_lightness():
    """Layers take the hues in stack order from the top, whatever the file's
    order. The hues are the Okabe-Ito set (Okabe and Ito 2008, colour-blind
    safe); neighbours among the first six differ by at least 12 in CIE L*
    (sRGB to L* by IEC 61966-2-1 and CIE 1976, computed here), so that they
    stay apart in lightness under any colour-vision deficiency (common
    practice: lightness survives where hue does not)."""
    from parasite.plot_style import LAYER_HUES, layer_colours

    okabe_ito = {"#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7"}
    assert set(LAYER_HUES) == okabe_ito
    hues = layer_colours([("bottom", 0.0), ("in2", 0.5e-3), ("top", 1.565e-3), ("in1", 1.0e-3)])
    assert [hues[n] for n in ("top", "in1", "in2", "bottom")] == list(LAYER_HUES[:4])

    def lightness(hexcode: str) -> float:
        c = [int(hexcode[i:i + 2], 16) / 255 for i in (1, 3, 5)]
        c = [x / 12.92 if x <= 0.04045 else ((x + 0.055) / 1.055) ** 2.4 for x in c]
        y = 0.2126 * c[0] + 0.7152 * c[1] + 0.0722 * c[2]
        f = y ** (1 / 3) if y > 216 / 24389 else (24389 / 27 * y + 16) / 116
        return 116 * f - 16

    assert lightness("#FFFFFF") == pytest.approx(100.0, abs=1e-6)
    assert all(abs(lightness(a) - lightness(b)) >= 12 for a, b in zip(LAYER_HUES[:5], LAYER_HUES[1:6],
                                                                       strict=True))


def test_legend_names_the_layers_top_first_and_vias_have_their_own_scale():
    """The legend names each drawn layer, top first, then the vias; the vias'
    colour bar spans the vias' own values (1 nH here), not the traces' 14 nH."""
    fig = board_figure(hand_graph(), hand_L())
    board = fig.axes[0]
    texts = [t.get_text() for t in board.get_legend().get_texts()]
    assert texts == ["layer top", "layer bottom", "vias"]
    via_bar = [a for a in fig.axes if a.get_title() == "vias"][0]
    assert max(via_bar.get_ylim()) == pytest.approx(1.0)  # nH


def test_close_pin_labels_do_not_overlap():
    """Six pins 1 mm apart in a row and a column on a 40 mm board: every label
    box is clear of every other (measured with matplotlib's renderer)."""
    from parasite.plot_labels import boxes_overlap

    graph = hand_graph()
    extra = [Pin(f"U1:{k}", "u1", str(k), ((5 + k) * MM, 0.0), "top", 3 + k) for k in range(6)]
    extra += [Pin(f"U2:{k}", "u2", str(k), (20 * MM, (1 + k) * MM), "top", 9 + k) for k in range(6)]
    pins = graph.pins + tuple(PinNode(p, "sw", 0) for p in extra)
    import dataclasses

    graph = dataclasses.replace(graph, pins=pins)
    fig = board_figure(graph, hand_L())
    gids = [f"pin:{p.pin.terminal}" for p in pins]
    assert len([t for t in fig.axes[0].texts if t.get_gid() in gids]) == len(pins)
    assert boxes_overlap(fig, gids) == []


def test_segment_names_of_numbered_nets_do_not_read_as_numbers():
    """``0.4`` (segment 4 of net 0) is written ``gnd.4`` ('gnd' is '0', project
    convention); other numbered nets are spelt ``net12.3``; names stay."""
    from parasite.plot_style import segment_label

    assert segment_label("0.4") == "gnd.4"
    assert segment_label("12.3") == "net12.3"
    assert segment_label("sw.2") == "sw.2"
    assert segment_label("probe:p1:tip.1") == "probe:p1:tip.1"
    from parasite.plot_style import net_label

    assert [net_label(n) for n in ("0", "12", "sw")] == ["gnd", "net12", "sw"]


def test_couplings_panel_orders_segments_by_net():
    graph = hand_graph()
    fig = board_figure(graph, hand_L(), couplings=True)
    board, heat = fig.axes[0], [a for a in fig.axes if a.get_title().startswith("coupling")][0]
    images = heat.get_images()
    assert len(images) == 1
    k = images[0].get_array()
    assert k.shape == (4, 4)
    assert k[0, 2] == pytest.approx(-2 / np.sqrt(14 * 13))
    assert [t.get_text() for t in heat.get_yticklabels()] == ["sw.1", "sw.2", "gnd.3", "gnd.4"]
    assert len([p for p in board.patches if (p.get_gid() or "").startswith("segment:")]) == 4


def test_missing_matplotlib_is_a_clear_error(monkeypatch):
    monkeypatch.setitem(sys.modules, "matplotlib", None)
    with pytest.raises(PlotDependencyError, match=r"need matplotlib.*pip install 'parasite\[plot\]'"):
        plot_bytes(hand_graph(), hand_L(), "png")


# ---------------------------------------------------------------------------
# The plot subcommand on real files


def _cli_files(tmp_path):
    from tests.loops.test_loops_pipeline import RECT_NET, rect_routes

    (tmp_path / "board.cir").write_text(RECT_NET)
    (tmp_path / "board.routes.toml").write_text(rect_routes())
    return str(tmp_path / "board.cir"), str(tmp_path / "board.routes.toml")


def test_plot_command_svg_with_a_loop(tmp_path):
    from click.testing import CliRunner

    from parasite.cli import main
    from parasite.pipeline import load_inputs

    net, routes = _cli_files(tmp_path)
    out = str(tmp_path / "loop.svg")
    result = CliRunner().invoke(main, ["plot", net, routes, "-o", out, "--loop", "rect"])
    assert result.exit_code == 0, result.output
    graph = load_inputs(net, routes).graph
    data = (tmp_path / "loop.svg").read_bytes()
    ids = _svg_ids(data)
    assert sorted(i for i in ids if i.startswith("segment:")) == sorted(
        f"segment:{s.id}" for s in graph.segments)
    assert sorted(i for i in ids if i.startswith("pin:")) == sorted(
        f"pin:{p.pin.terminal}" for p in graph.pins)
    assert "loop 'rect': " in data.decode()
    # Deterministic: the same inputs give the same bytes.
    out2 = str(tmp_path / "again.svg")
    CliRunner().invoke(main, ["plot", net, routes, "-o", out2, "--loop", "rect"])
    assert (tmp_path / "again.svg").read_bytes() == data


def test_plot_command_png_with_couplings(tmp_path):
    import matplotlib.image as mpimg
    from click.testing import CliRunner

    from parasite.cli import main

    net, routes = _cli_files(tmp_path)
    out = tmp_path / "board.png"
    result = CliRunner().invoke(main, ["plot", net, routes, "-o", str(out), "--couplings"])
    assert result.exit_code == 0, result.output
    image = mpimg.imread(str(out))
    assert image.shape[1] > image.shape[0] > 500


def test_plot_command_errors(tmp_path, monkeypatch):
    from click.testing import CliRunner

    from parasite.cli import main

    net, routes = _cli_files(tmp_path)
    r = CliRunner().invoke(main, ["plot", net, routes, "-o", str(tmp_path / "x.pdf")])
    assert r.exit_code == 2 and "use .png or .svg" in r.output
    r = CliRunner().invoke(main, ["plot", net, routes, "-o", str(tmp_path / "x.png"),
                                  "--loop", "nope"])
    assert r.exit_code == 2 and "no loop named 'nope'; its loops: 'rect'" in r.output
    r = CliRunner().invoke(main, ["plot", net, routes, "-o", net])
    assert r.exit_code == 2  # not .png/.svg: refused before anything else
    monkeypatch.setitem(sys.modules, "matplotlib", None)
    r = CliRunner().invoke(main, ["plot", net, routes, "-o", str(tmp_path / "y.png")])
    assert r.exit_code == 1 and "pip install 'parasite[plot]'" in r.output
    assert not (tmp_path / "y.png").exists()


def test_probe_leads_are_named_and_on_no_colour_scale():
    """The probe of the probe_resistor fixture: its leads drawn in the one
    probe colour (whatever their inductance), a label with the probe's name,
    and 'probe leads' in the legend."""
    from matplotlib.colors import to_hex

    from parasite.pipeline import extract, load_inputs
    from parasite.plot_style import PROBE_COLOUR
    from tests.boards import ROUTES

    inputs = load_inputs(str(ROUTES / "probe_resistor.cir"), str(ROUTES / "probe_resistor.routes.toml"))
    fig = board_figure(inputs.graph, extract(inputs).L)
    board = fig.axes[0]
    leads = [ln for ln in board.get_lines() if (ln.get_gid() or "").startswith("segment:probe")]
    assert len(leads) == sum(1 for s in inputs.graph.segments if s.kind == "probe") > 0
    assert {to_hex(ln.get_color()) for ln in leads} == {PROBE_COLOUR}
    assert [t.get_text() for t in board.texts if t.get_gid() == "probe:p1"] == ["probe p1"]
    assert "probe leads" in [t.get_text() for t in board.get_legend().get_texts()]
