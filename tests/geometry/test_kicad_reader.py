"""The board reader on small hand-written snippets of the KiCad 6, 7, 8 and 9
forms, and on bad boards.

Reference for the forms: KiCad's developer documentation, "Board File Format"
(dev-docs.kicad.org/en/file-formats/sexpr-pcb/): version numbers written by
KiCad 6 (20211014), 7 (20221018), 8 (20240108) and 9 (20241229); KiCad 8 and
later write ``(uuid ...)`` for ``(tstamp ...)`` and the footprint's reference
as ``(property "Reference" ...)`` instead of ``(fp_text reference ...)``;
KiCad 9 numbers the layers differently (B.Cu is 2, In1.Cu 4) but keeps
their names. Expected values are the snippets' own numbers (mm in the file,
metres in the model), worked by hand.
"""

from __future__ import annotations

import math

import pytest

from geometry.kicad import BoardError, read_board_text
from geometry.kicad.polygons import arc_length, arc_polyline

LAYERS = {
    6: '(layers (0 "F.Cu" signal) (31 "B.Cu" signal) (44 "Edge.Cuts" user))',
    9: '(layers (0 "F.Cu" signal) (4 "In1.Cu" signal) (2 "B.Cu" signal) (25 "Edge.Cuts" user))',
}


def board(version: int, body: str, layers: str = LAYERS[6]) -> str:
    return (f'(kicad_pcb (version {version}) (generator "pcbnew")\n  (general (thickness 1.6))\n'
            f'  {layers}\n  (net 0 "")\n  (net 1 "GND")\n  (net 2 "SIG")\n{body}\n)\n')


FP6 = """  (footprint "lib:R" (layer "F.Cu") (tstamp 00000000-0000-0000-0000-000000000001) (at 10 20 90)
    (fp_text reference "R5" (at 0 0) (layer "F.SilkS") (effects (font (size 1 1))))
    (pad "1" smd rect (at 1 0 90) (size 1 1.5) (layers "F.Cu" "F.Mask") (net 2 "SIG"))
  )"""
FP8 = """  (footprint "lib:R" (layer "F.Cu") (uuid "00000000-0000-0000-0000-000000000001") (at 10 20 90)
    (property "Reference" "R5" (at 0 0 0) (layer "F.SilkS") (uuid "x") (effects (font (size 1 1))))
    (property "Value" "10k" (at 0 0 0) (layer "F.Fab"))
    (pad "1" smd roundrect (at 1 0 90) (size 1 1.5) (layers "F.Cu" "F.Mask") (roundrect_rratio 0.25)
      (net 2 "SIG") (pinfunction "A") (pintype "passive") (uuid "y"))
  )"""


@pytest.mark.parametrize(("version", "fp"), [(20211014, FP6), (20221018, FP6), (20240108, FP8),
                                             (20241229, FP8)])
def test_footprint_forms(version: int, fp: str) -> None:
    """A footprint at (10, 20) turned 90 degrees with a pad at (1, 0) in its own
    frame: KiCad turns counter-clockwise as seen from the top with y down, so
    the pad is at (10, 19) mm (the same rule pcbnew applies to the fixtures,
    checked in test_kicad_pcbnew.py)."""
    b = read_board_text(board(version, fp), "snippet.kicad_pcb")
    (pad,) = b.pads
    assert pad.reference == "R5" and pad.number == "1" and pad.net == "SIG"
    assert pad.at == pytest.approx((10e-3, 19e-3), abs=1e-12)
    assert pad.size == pytest.approx((1e-3, 1.5e-3))
    assert pad.layers == ("F.Cu",)


def test_kicad9_layers_and_uuid_tracks() -> None:
    """KiCad 9: layer numbers 0/4/2, items with (uuid ...), a net named only."""
    body = """  (segment (start 0 0) (end 3 4) (width 0.25) (layer "In1.Cu") (net 1) (uuid "a"))
  (via blind (at 3 4) (size 0.6) (drill 0.3) (layers "F.Cu" "In1.Cu") (net 1) (uuid "b"))
  (segment (start 3 4) (end 6 4) (width 0.25) (layer "F.Cu") (net "SIG") (uuid "c"))"""
    b = read_board_text(board(20241229, body, LAYERS[9]), "k9.kicad_pcb")
    assert [la.name for la in b.layers] == ["F.Cu", "In1.Cu", "B.Cu"]
    assert b.tracks[0].length == pytest.approx(5e-3)
    assert [t.net for t in b.tracks] == ["GND", "SIG"]
    (via,) = b.vias
    assert via.kind == "blind" and via.layers == ("F.Cu", "In1.Cu") and via.drill == pytest.approx(0.3e-3)
    # no stack-up: 1.6 mm, 35 um copper, two equal dielectric gaps (the documented default)
    gap = (1.6e-3 - 3 * 35e-6) / 2
    assert [la.z for la in b.layers] == pytest.approx([2 * (35e-6 + gap), 35e-6 + gap, 0.0])


def test_stackup_gives_z() -> None:
    """z of each copper layer from the stack-up, bottom copper at 0: F.Cu sits
    on 0.035 + 1.51 (core, two sub-layers 1.0 + 0.51) = 1.545 mm."""
    setup = """  (setup (stackup
    (layer "F.SilkS" (type "Top Silk Screen"))
    (layer "F.Mask" (type "Top Solder Mask") (thickness 0.01))
    (layer "F.Cu" (type "copper") (thickness 0.035))
    (layer "dielectric 1" (type "core") (thickness 1.0) (material "FR4") addsublayer (thickness 0.51))
    (layer "B.Cu" (type "copper") (thickness 0.035))
    (layer "B.Mask" (type "Bottom Solder Mask") (thickness 0.01))
    (copper_finish "None")) (aux_axis_origin 50 60))"""
    b = read_board_text(board(20221018, setup), "s.kicad_pcb")
    assert b.stackup_given
    assert b.layer("F.Cu").z == pytest.approx(1.545e-3)
    assert b.layer("B.Cu").z == 0.0
    assert b.origin == pytest.approx((50e-3, 60e-3))


def test_arc_polyline_within_tolerance() -> None:
    """A half circle of radius 2 mm through (0, 2): every chord's midpoint lies
    within the tolerance of the circle (the sagitta r(1 - cos(t/2)); checked
    here by the distance to the centre), and the exact length is pi r."""
    start, mid, end = (-2e-3, 0.0), (0.0, 2e-3), (2e-3, 0.0)
    assert arc_length(start, mid, end) == pytest.approx(math.pi * 2e-3, rel=1e-12)
    tol = 5e-6
    pts = arc_polyline(start, mid, end, tol)
    assert pts[0] == start and pts[-1] == end
    for a, b in zip(pts, pts[1:], strict=False):
        for p in (a, b):
            assert math.hypot(*p) == pytest.approx(2e-3, rel=1e-12)
        m = ((a[0] + b[0]) / 2, (a[1] + b[1]) / 2)
        assert 2e-3 - math.hypot(*m) <= tol * (1 + 1e-9)
        assert m[1] > 0  # on the side of the mid point
    assert len(pts) - 1 == math.ceil(math.pi / (2 * math.acos(1 - tol / 2e-3)))


@pytest.mark.parametrize(("text", "line", "words"), [
    ("(kicad_pcb (version 20211014)\n  (layers (0 \"F.Cu\" signal)\n", 2, "ends inside"),
    ("(kicad_pcb (version 20211014)\n (net 0 \"\"))\n)\n", 3, "closes no list"),
    ("(kicad_pcb (version 20211014)\n (net 0 \"GND)\n)\n", 2, "unterminated string"),
    ("(kicad_pcb (version 20171130)\n (layers (0 \"F.Cu\" signal))\n)\n", 1, "version 20171130"),
    ("(kicad_pcb (version 20260101)\n (layers (0 \"F.Cu\" signal))\n)\n", 1, "version 20260101"),
    ("(kicad_pcb (version 20211014)\n (layers (0 \"F.Cu\" signal))\n (segment (start 0 0) (end 1 x) "
     "(width 0.2) (layer \"F.Cu\") (net 0))\n)\n", 3, "'x' is not a number"),
    ("(kicad_pcb (version 20211014)\n (layers (0 \"F.Cu\" signal))\n\n (segment (start 0 0) (end 1 1) "
     "(layer \"F.Cu\") (net 0))\n)\n", 4, "missing (width"),
    ("(kicad_pcb (version 20211014)\n (layers (0 \"F.Cu\" signal))\n (via (at 0 0) (size 0.6) "
     "(drill 0.3) (layers \"F.Cu\" \"B.Cu\") (net 0))\n)\n", 3, "two copper layers"),
    ("", 1, "no S-expression"),
])
def test_bad_boards(text: str, line: int, words: str) -> None:
    """Truncated file, unbalanced parentheses, unterminated string, versions
    before KiCad 6 and after KiCad 9, a bad number, a missing field the
    importer uses, a via to a layer the board lacks: BoardError with the file
    and the line (common practice for error messages)."""
    with pytest.raises(BoardError, match=words.replace("(", r"\(")) as info:
        read_board_text(text, "bad.kicad_pcb")
    assert info.value.file == "bad.kicad_pcb"
    assert info.value.line == line
    assert str(info.value).startswith(f"bad.kicad_pcb:{line}: error:")


def test_unknown_tokens_are_ignored() -> None:
    """Tokens the importer does not use (teardrops, a future field) are skipped."""
    body = """  (segment (start 0 0) (end 1 0) (width 0.2) (layer "F.Cu") (net 1) (locked yes)
    (teardrop (enabled yes)) (some_future_field 1 2 (nested "x")))
  (gr_text "hello" (at 0 0) (layer "F.SilkS"))
  (embedded_fonts no)"""
    b = read_board_text(board(20241229, body), "t.kicad_pcb")
    assert len(b.tracks) == 1 and b.tracks[0].length == pytest.approx(1e-3)
