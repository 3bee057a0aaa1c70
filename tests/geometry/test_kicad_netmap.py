"""Net mapping and copper conversion of the importer on small hand-written
boards, with expected values worked by hand from the snippets' numbers.

Conventions checked against an outside reference elsewhere: KiCad's pad
placement (tests/geometry/test_kicad_pcbnew.py, pcbnew 6.0.11). Terminal
names are those of the project's element table (docs/routes-file.md, "Pins";
subcircuit ports by name). The expected stubs follow from plane geometry:
the foot of the perpendicular from a point to a line (common practice).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from geometry.kicad import BoardError, ElementInfo, Options, import_board, read_board_text, read_pin_map
from geometry.routes import parse_routes
from parasite.netlist import parse_netlist

HEAD = """(kicad_pcb (version 20240108) (generator "pcbnew")
  (layers (0 "F.Cu" signal) (1 "In1.Cu" signal) (31 "B.Cu" signal))
  (setup (aux_axis_origin 0 50))
  (net 0 "")
  (net 1 "A")
  (net 2 "B")
"""


def fp(ref: str, at: str, pads: str) -> str:
    return (f'  (footprint "l:x" (layer "F.Cu") (at {at})\n'
            f'    (property "Reference" "{ref}" (at 0 0 0) (layer "F.SilkS"))\n{pads}  )\n')


def pad(num: str, at: str, net: int, name: str, size: str = "1 1", kind: str = "smd rect",
        layers: str = '"F.Cu"', extra: str = "") -> str:
    return f'    (pad "{num}" {kind} (at {at}) (size {size}){extra} (layers {layers}) (net {net} "{name}"))\n'


def elements(netlist: str) -> list[ElementInfo]:
    nl = parse_netlist(netlist.encode(), "t.cir", Path("."))
    return [ElementInfo(e.name, e.nodes, e.terminal_names) for e in nl.elements]


def test_subcircuit_instance_from_footprint_reference_and_pin_map(tmp_path: Path) -> None:
    """Footprint U1 is the instance XU1; its pad 3 is port 'out' by the pin
    map, pad 1 port 'in' by position. Pins carry the port names."""
    body = (fp("U1", "10 40", pad("1", "-2 0", 1, "A") + pad("3", "2 0", 2, "B"))
            + '  (segment (start 8 40) (end 8 30) (width 0.3) (layer "F.Cu") (net 1))\n'
            + '  (segment (start 12 40) (end 12 30) (width 0.3) (layer "F.Cu") (net 2))\n)')
    board = read_board_text(HEAD + body, "u.kicad_pcb")
    nl = elements(".title t\n.subckt amp in gnd out\nR1 in out 1k\n.ends\nXU1 a 0 b amp\n.end\n")
    pin_map_file = tmp_path / "pins.toml"
    pin_map_file.write_text('[U1]\n"1" = "in"\n"3" = "out"\n')
    text, draft = import_board(board, nl, Options(), read_pin_map(pin_map_file), str(pin_map_file))
    assert draft.net_names == {"A": "a", "B": "b"}
    assert [(p.terminal, p.at) for p in draft.pins] == [("XU1:in", pytest.approx((8e-3, 10e-3))),
                                                         ("XU1:out", pytest.approx((12e-3, 10e-3)))]
    parse_routes(text.encode(), "out.routes.toml", "toml")  # a valid routes file


def test_pin_map_naming_an_unknown_terminal(tmp_path: Path) -> None:
    board = read_board_text(HEAD + fp("R1", "10 40", pad("1", "-1 0", 1, "A")) + ")", "r.kicad_pcb")
    pin_map_file = tmp_path / "pins.toml"
    pin_map_file.write_text('[R1]\n"1" = "gate"\n')
    with pytest.raises(BoardError, match=r"R1 has no terminal 'gate' \(its terminals: 1, 2\)") as info:
        import_board(board, elements("t\nR1 a b 1\n.end\n"), Options(), read_pin_map(pin_map_file),
                     str(pin_map_file))
    assert info.value.file == str(pin_map_file) and info.value.key == "R1.1"


def test_stubs_to_pad_centre_line_and_via_centre() -> None:
    """A track ends 0.4 mm off a 1 x 3 mm pad's centre line (the pad stands
    upright in its footprint): a stub runs from the end to the foot on the
    centre line. A track ends on a via's ring 0.2 mm from its centre: a stub
    to the centre. The blind via runs top -> in1; a through-hole pad is a
    via from top to bottom with the drill as its diameter."""
    body = (fp("R1", "10 40", pad("1", "0 0", 1, "A", size="1 3"))
            + '  (segment (start 10.4 30) (end 10.4 40.5) (width 0.2) (layer "F.Cu") (net 1))\n'
            + '  (via blind (at 20 40) (size 0.8) (drill 0.4) (layers "F.Cu" "In1.Cu") (net 2))\n'
            + '  (segment (start 20.2 40) (end 25 40) (width 0.2) (layer "In1.Cu") (net 2))\n'
            + fp("J1", "30 40", pad("1", "0 0", 2, "B", size="1.7 1.7", kind="thru_hole circle",
                                    layers='"*.Cu"', extra=" (drill 1)"))
            + '  (segment (start 30 40) (end 25 40) (width 0.2) (layer "B.Cu") (net 2))\n)')
    board = read_board_text(HEAD + body, "s.kicad_pcb")
    text, draft = import_board(board, None, Options())
    stubs = {t.name: t for t in draft.traces if t.name.startswith("stub")}
    # pad centre line: x = 10 (KiCad) -> routes x 10 mm; the end (10.4, 40.5) -> routes (10.4, 9.5)
    pad_stub = stubs["stub to pad R1.1"]
    assert pad_stub.points == (pytest.approx((10.4e-3, 9.5e-3)), pytest.approx((10e-3, 9.5e-3)))
    assert pad_stub.width == pytest.approx(0.2e-3) and pad_stub.layer == "top"
    via_stub = next(t for n, t in stubs.items() if n.startswith("stub to via"))
    assert via_stub.points == (pytest.approx((20.2e-3, 10e-3)), pytest.approx((20e-3, 10e-3)))
    assert via_stub.layer == "in1"
    vias = {(v.from_layer, v.to_layer): v for v in draft.vias}
    assert vias[("top", "in1")].diameter == pytest.approx(0.4e-3)
    assert vias[("top", "bottom")].diameter == pytest.approx(1e-3)
    assert vias[("top", "bottom")].at == pytest.approx((30e-3, 10e-3))
    parse_routes(text.encode(), "out.routes.toml", "toml")


def test_two_nodes_on_one_board_net_and_two_nets_on_one_node() -> None:
    """R1 pads 1 and 2 both on board net A: in the netlist they are nodes
    'x' and 'y' -> an error naming both; two board nets on one node 'x' are
    imported and noted."""
    board = read_board_text(HEAD + fp("R1", "10 40", pad("1", "-1 0", 1, "A") + pad("2", "1 0", 1, "A"))
                            + ")", "t.kicad_pcb")
    with pytest.raises(BoardError, match="board net 'A' joins two different netlist nodes: pad R1.1"):
        import_board(board, elements("t\nR1 x y 1\n.end\n"), Options())
    board = read_board_text(HEAD + fp("R1", "10 40", pad("1", "-1 0", 1, "A") + pad("2", "1 0", 2, "B"))
                            + ")", "t.kicad_pcb")
    _, draft = import_board(board, elements("t\nR1 x x 1\n.end\n"), Options())
    assert any("'A' and 'B' are both node 'x'" in n for n in draft.notes)


def test_plane_layer_takes_the_zone_net_and_refuses_tracks() -> None:
    zone = ('  (zone (net 2) (net_name "B") (layer "In1.Cu") (polygon (pts (xy 0 0) (xy 9 0) (xy 9 9)))\n'
            '    (filled_polygon (layer "In1.Cu") (pts (xy 0 0) (xy 9 0) (xy 9 9))))\n')
    board = read_board_text(HEAD + zone + ")", "z.kicad_pcb")
    _, draft = import_board(board, None, Options())  # without --plane: the fill is a pour
    (pour,) = draft.pours
    assert (pour.net, pour.layer) == ("b", "in1")
    # KiCad's y turned upward from the board's auxiliary axis origin (0, 50 mm)
    expected = sorted([(0.0, 50e-3), (9e-3, 50e-3), (9e-3, 41e-3)])
    assert all(p == pytest.approx(q, abs=1e-12)
               for p, q in zip(sorted(pour.outline), expected, strict=True))
    assert not [la for la in draft.layers if la[0] == "in1"][0][3]  # and not a plane
    _, draft = import_board(board, None, Options(planes=("In1.Cu",)))
    assert [la for la in draft.layers if la[0] == "in1"][0][3] == "b"
    track = '  (segment (start 0 0) (end 1 0) (width 0.2) (layer "In1.Cu") (net 1))\n'
    board = read_board_text(HEAD + zone + track + ")", "z.kicad_pcb")
    with pytest.raises(BoardError, match="named a plane by --plane") as info:
        import_board(board, None, Options(planes=("In1.Cu",)))
    assert info.value.line == len((HEAD + zone).splitlines()) + 1  # the segment's line
