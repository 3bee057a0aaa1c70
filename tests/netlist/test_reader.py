"""The netlist reader on small decks: lines, comments, continuation, fields,
the element-kind table, includes, and the lookup API.

Where a rule is ngspice's, the docstring says how it was checked: "ngspice -b"
means a small deck was run through ngspice 39 and its ``listing e`` output (its
own reading of the deck) was compared; the facts are also recorded in
shared/notes/ngspice-facts.md. Element forms are those of the ngspice 39 manual
(/usr/share/doc/ngspice-doc), chapters 3 to 13.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from parasite.errors import NetlistError
from parasite.netlist import (
    ELEMENT_KINDS,
    canonical_node,
    parse_netlist,
    read_netlist,
)


def parse(text: str | bytes, base: Path | None = None):  # type: ignore[no-untyped-def]
    data = text.encode() if isinstance(text, str) else text
    return parse_netlist(data, "t.cir", base or Path("."))


def nodes(text: str) -> dict[str, tuple[str, ...]]:
    return {el.name: el.nodes for el in parse(text).elements}


# -- lines and comments ---------------------------------------------------------


def test_first_line_is_the_title_whatever_it_holds() -> None:
    """ngspice -b: a deck whose first line is blank keeps the element on line 2;
    an element on line 1 is the title and not an element."""
    assert nodes("\nR1 a 0 1k\n") == {"R1": ("a", "0")}
    net = parse("R9 x 0 1\nR1 a 0 1k\n")
    assert net.title == "R9 x 0 1"
    assert net.element_names() == {"r1"}


def test_plus_line_after_title_continues_the_title_with_a_warning() -> None:
    """ngspice -b: "title / + R9 a 0 1" drops R9 silently (exit 0). The reader
    does the same (a netlist ngspice accepts is not refused) and warns."""
    net = parse("title\n+ R9 a 0 1\nR1 a 0 1\n")
    assert net.element_names() == {"r1"}
    assert net.warnings == ["t.cir:2: warning: a '+' line right after the title "
                            "continues the title; ngspice ignores it"]


@pytest.mark.parametrize(
    "line",
    ["* star", "   * indented star", "; semicolon", "$ dollar", "? question", "& amp",
     "! bang", ": colon", ", comma", "= equals", "( paren"],
)
def test_comment_lines(line: str) -> None:
    """ngspice -b: '*' first is a comment; ngspice turns the other leading
    characters it lists ('= [] ? () & % $"!:,;') into '*' with a warning."""
    assert nodes(f"t\n{line} R7 x y 1\nR1 a 0 1\n") == {"R1": ("a", "0")}


@pytest.mark.parametrize(
    "card, expected",
    [
        ("R1 a b 1k ; c d", ("a", "b")),
        ("R1 a b 1k $ c d", ("a", "b")),
        ("R1 a b 1k,$ c d", ("a", "b")),
        ("R1 a b\t$tab", ("a", "b")),
        ("R1 a$x b 1", ("a$x", "b")),  # '$' after no blank is part of a name
        ("R1 a b 1k$ 55", ("a", "b")),
        ("R1 a//x b 1", None),  # '//' cuts the line: R1 a -> missing node
    ],
)
def test_inline_comments(card: str, expected: tuple[str, ...] | None) -> None:
    """ngspice -b (listing e): ';' and '//' end the card anywhere, '$' after a
    space, tab or comma; 'a$b' stays a node name."""
    if expected is None:
        with pytest.raises(NetlistError, match="R1: a resistor needs 2 nodes"):
            parse(f"t\n{card}\n")
    else:
        assert nodes(f"t\n{card}\n") == {"R1": expected}


def test_continuation_lines_with_comments_and_blanks_between() -> None:
    """ngspice -b: '+' continues the previous card, also indented, also after
    comment and blank lines; two trailing backslashes glue the next line on."""
    text = "t\nR1 in\n* note\n\n   + out\n+ 1k\nR2 a \\\\\nb 2\nC1 x 0\n\t+\t1n\n"
    net = parse(text)
    assert {e.name: e.nodes for e in net.elements} == {
        "R1": ("in", "out"), "R2": ("a", "b"), "C1": ("x", "0")
    }
    assert net.card_text("R1") == "R1 in  out  1k"
    assert net.element("R1").line == 2


def test_backslash_glue_skips_blank_lines() -> None:
    """ngspice -b (listing e): "R1 a \\\\", a blank line, then "b 1k" reads
    "r1 a b 1k"."""
    assert nodes("t\nR1 a \\\\\n\n  \nb 1k\n") == {"R1": ("a", "b")}


def test_fields_split_at_commas_and_parentheses() -> None:
    """ngspice -b: "R1 a,0 1k" and "R2 (a b) 1k" both read two nodes."""
    assert nodes("t\nR1 a,0 1k\nR2 (a b) 1k\n") == {"R1": ("a", "0"), "R2": ("a", "b")}


def test_crlf_and_non_utf8_bytes_round_trip() -> None:
    data = b"t\r\n* \xb5F \xff\xfe\r\nR1 \xc2\xb5 0 1k ; \xe9\r\nV1 \xc2\xb5 0 1\r\n.end"
    net = parse(data)
    assert net.to_bytes() == data
    assert net.element("R1").nodes == ("\u00b5", "0")  # UTF-8 node name
    assert "\u00b5" in net.node_names()


def test_names_and_nodes_ignore_case_and_gnd_is_ground() -> None:
    """ngspice 39 compares names without case; "gnd" is ground like "0"."""
    net = parse("t\nRa IN Gnd 1\nvB in GND 1\n")
    assert net.element("rA").nodes == ("in", "0")
    assert net.element("VB").name == "vB"
    assert net.element("vb").key == "vb" and net.element("vb").letter == "V"
    assert canonical_node("GND") == "0" and canonical_node("Out") == "out"
    assert canonical_node("00") == "00"


def test_control_block_is_kept_and_not_read() -> None:
    text = "t\nR1 a 0 1\n.control\nR2 b 0 1\nrun\n.endc\nR3 c 0 1\n"
    net = parse(text)
    assert net.element_names() == {"r1", "r3"}
    assert net.to_bytes() == text.encode()


def test_cards_after_end_are_read() -> None:
    """ngspice -b: a resistor after .end changes the operating point, so ngspice
    reads cards after .end (also in included files)."""
    assert nodes("t\nV1 a 0 1\n.end\nR2 a 0 1k\n") == {"V1": ("a", "0"), "R2": ("a", "0")}


# -- the element-kind table -------------------------------------------------------


def test_every_letter_has_a_row() -> None:
    """ngspice 39 reads an element for every letter A-Z (A XSPICE ... Z MESFET)."""
    assert sorted(ELEMENT_KINDS) == [chr(c) for c in range(ord("A"), ord("Z") + 1)]


# The routes-file spec's terminal table (shared/spec/routes-file.md), copied by hand.
SPEC_TERMINALS = {
    "R": ("1", "2"), "C": ("1", "2"), "L": ("1", "2"), "B": ("1", "2"),
    "V": ("p", "n"), "I": ("p", "n"), "D": ("a", "k"), "Q": ("c", "b", "e", "s"),
    "J": ("d", "g", "s"), "Z": ("d", "g", "s"), "M": ("d", "g", "s", "b"),
    "E": ("p", "n", "cp", "cn"), "G": ("p", "n", "cp", "cn"), "F": ("p", "n"),
    "H": ("p", "n"), "S": ("p", "n", "cp", "cn"),
}


@pytest.mark.parametrize("letter", sorted(SPEC_TERMINALS))
def test_terminal_names_follow_the_spec(letter: str) -> None:
    kind = ELEMENT_KINDS[letter]
    assert kind.terminals[: len(SPEC_TERMINALS[letter])] == SPEC_TERMINALS[letter]
    if letter in "RCLB":
        assert dict(kind.aliases) == {"p": "1", "n": "2"}


MODELS = """
.model dm D
.model qm NPN
.model nm NMOS level=1
.model vd VDMOS
.model jm NJF
.model zm NMF
.model sm SW
.model wm CSW
.model om LTRA len=1 l=1n c=1p
.model um URC
.model ym TXL length=1
.model pm CPL length=1
.model am gain
.model osd bsimbulk
"""

# card -> (nodes, terminal names, model), from the general forms of the ngspice 39 manual
FORMS = [
    ("R1 a b 1k", ("a", "b"), ("1", "2"), None),
    ("R1 a b r=1k tc1=0.1", ("a", "b"), ("1", "2"), None),
    ("C1 a b 1n ic=1", ("a", "b"), ("1", "2"), None),
    ("L5 a b 1u", ("a", "b"), ("1", "2"), None),
    ("B1 a b v = v(c) * 2", ("a", "b"), ("1", "2"), None),
    ("V1 a b PULSE(0 1 0 1n 1n 5n 10n)", ("a", "b"), ("p", "n"), None),
    ("I1 a b DC 1m", ("a", "b"), ("p", "n"), None),
    ("D1 a k dm", ("a", "k"), ("a", "k"), "dm"),
    ("D1 a k tj dm thermal", ("a", "k", "tj"), ("a", "k", "tj"), "dm"),
    ("Q1 c b e qm", ("c", "b", "e"), ("c", "b", "e"), "qm"),
    ("Q1 c b e s qm area=2", ("c", "b", "e", "s"), ("c", "b", "e", "s"), "qm"),
    ("Q1 c b e s t qm", ("c", "b", "e", "s", "t"), ("c", "b", "e", "s", "tj"), "qm"),
    ("M1 d g s b nm L=1u W=2u", ("d", "g", "s", "b"), ("d", "g", "s", "b"), "nm"),
    ("M1 d g s vd", ("d", "g", "s"), ("d", "g", "s"), "vd"),
    ("M1 d g s tj tc vd thermal", ("d", "g", "s", "tj", "tc"), ("d", "g", "s", "tj", "tc"), "vd"),
    ("J1 d g s jm", ("d", "g", "s"), ("d", "g", "s"), "jm"),
    ("Z1 d g s zm", ("d", "g", "s"), ("d", "g", "s"), "zm"),
    ("E1 p n cp cn 2", ("p", "n", "cp", "cn"), ("p", "n", "cp", "cn"), None),
    ("E1 p n vol='v(a)*2'", ("p", "n"), ("p", "n"), None),
    ("E1 p n value = {v(a)}", ("p", "n"), ("p", "n"), None),
    ("E1 p n TABLE {v(a)} = (0,0) (1,1)", ("p", "n"), ("p", "n"), None),
    ("E1 p n POLY(2) a 0 b 0 0 1 1", ("p", "n", "a", "0", "b", "0"),
     ("p", "n", "cp1", "cn1", "cp2", "cn2"), None),
    ("G1 p n cp cn 1m", ("p", "n", "cp", "cn"), ("p", "n", "cp", "cn"), None),
    ("G1 p n cur = {v(a)/1k}", ("p", "n"), ("p", "n"), None),
    ("F1 p n Vsense 2", ("p", "n"), ("p", "n"), None),
    ("H1 p n POLY(1) Vsense 0 2", ("p", "n"), ("p", "n"), None),
    ("K1 L1 L2 0.5", (), (), None),
    ("S1 p n cp cn sm ON", ("p", "n", "cp", "cn"), ("p", "n", "cp", "cn"), "sm"),
    ("W1 p n Vsense wm", ("p", "n"), ("p", "n"), "wm"),
    ("T1 a 0 b 0 Z0=50 TD=1n", ("a", "0", "b", "0"), ("p1", "n1", "p2", "n2"), None),
    ("O1 a 0 b 0 om", ("a", "0", "b", "0"), ("p1", "n1", "p2", "n2"), "om"),
    ("U1 a b 0 um l=1m", ("a", "b", "0"), ("1", "2", "3"), "um"),
    ("Y1 a 0 b 0 ym LEN=1", ("a", "0", "b", "0"), ("p1", "n1", "p2", "n2"), "ym"),
    ("P1 a b 0 c d 0 pm LEN=1", ("a", "b", "0", "c", "d", "0"), ("1", "2", "3", "4", "5", "6"),
     "pm"),
    ("A1 [a b] %vd(c d) ~e null %vnam Vx f am", ("a", "b", "c", "d", "e", "f"),
     ("1", "2", "3", "4", "5", "6"), "am"),
    ("N1 d g s b osd l=1u", ("d", "g", "s", "b"), ("1", "2", "3", "4"), "osd"),
]


@pytest.mark.parametrize("card, expected, terminals, model", FORMS, ids=[f[0] for f in FORMS])
def test_element_forms(
    card: str, expected: tuple[str, ...], terminals: tuple[str, ...], model: str | None
) -> None:
    net = parse(f"t\n{card}\n{MODELS}\nL1 x 0 1u\nL2 y 0 1u\nVsense z 0 0\nVx zz 0 0\n")
    name = card.split()[0]
    el = net.element(name)
    assert (el.nodes, el.terminal_names, el.model) == (expected, terminals, model)


def test_subcircuit_instances() -> None:
    text = """t
X1 a b DRV
X2 c 0 DRV w=2 l={x}
X3 e f DRV params: w=3
.subckt DRV in out params: w=1 l=1
R1 in out {w}
.ends
"""
    net = parse(text)
    assert net.element("X1").terminal_names == ("in", "out")
    assert net.element("X2").nodes == ("c", "0")
    assert net.element("X3").subckt == "drv"
    assert net.subckts["drv"].ports == ("in", "out")


def test_binned_models_are_found_by_base_name() -> None:
    """Model binning (ngspice 39 manual, 11.2 "MOSFET model binning"): cards name
    NCH, the models are NCH.1, NCH.2."""
    net = parse("t\nM1 d g 0 0 NCH\n.model NCH.1 NMOS level=8\n.model NCH.2 NMOS level=8\n")
    assert net.element("M1").nodes == ("d", "g", "0", "0")


def test_models_are_read_with_type_and_raw_parameters() -> None:
    net = parse("t\n.model Mhs VDMOS (Pchan Rd=4m vto = {vt}\n+ cgdmax=1n)\n")
    model = net.models["mhs"]
    assert model.name == "Mhs" and model.type == "vdmos"
    assert model.params == {"pchan": "", "rd": "4m", "vto": "{vt}", "cgdmax": "1n"}
    assert model.line == 2


def test_local_models_and_subcircuits_are_scoped() -> None:
    text = """t
.subckt A p n
D1 p n dloc
.model dloc D
.subckt B x
R1 x 0 1
.ends
XB p B
.ends
X1 a b A
"""
    net = parse(text)
    assert net.element("X1").nodes == ("a", "b")
    assert "dloc" in net.models and "b" in net.subckts
    assert {"r1", "d1", "xb", "x1"} == net.element_names()
    assert {"p", "n", "x", "a", "b", "0"} <= net.node_names()


def test_unresolvable_node_count_is_an_error_only_when_asked() -> None:
    """A diode whose model is not defined: its node count (2 or 3) cannot be
    told. Reading works; asking for the element names the card."""
    net = parse("t\nD1 a k x nomodel\nR1 a 0 1\n")
    assert net.element("R1").nodes == ("a", "0")
    assert net.element_names() == {"d1", "r1"}
    assert {"a", "k", "x"} <= net.node_names()  # every field that could be a node
    with pytest.raises(NetlistError, match=r"t.cir:2: error: D1: cannot tell how many nodes "
                       r"this diode has: none of the fields 'x', 'nomodel' names a model"):
        net.element("D1")
    with pytest.raises(NetlistError, match="D1: cannot tell"):
        net.elements  # noqa: B018


def test_three_node_mosfet_needs_a_vdmos_model() -> None:
    """ngspice -b: "M1 d g 0 nch" with an NMOS model fails with "not enough nodes"."""
    net = parse("t\nM1 d g 0 nch\n.model nch nmos\n")
    with pytest.raises(NetlistError, match="M1: a MOSFET with 3 nodes needs a VDMOS model, "
                       "but model 'nch' is of type 'nmos'"):
        net.element("M1")


def test_undefined_subcircuit_and_port_mismatch_when_asked() -> None:
    net = parse("t\nX1 a b NOPE\nX2 a b c TWO\n.subckt TWO p n\n.ends\n")
    with pytest.raises(NetlistError, match="X1: subcircuit 'NOPE' is not defined"):
        net.element("X1")
    with pytest.raises(NetlistError, match=r"X2: 3 node\(s\) given, but subcircuit 'TWO' "
                       r"has 2 port\(s\) \(p, n\)"):
        net.terminal_names("X2")


# -- terminals --------------------------------------------------------------------


def test_terminal_index_by_name_alias_and_position() -> None:
    net = parse("t\nR1 a b 1\nM1 d g s vd\n.model vd VDMOS\n")
    assert net.terminal_index("R1", "2") == 1
    assert net.terminal_index("r1", "P") == 0 and net.terminal_index("R1", "n") == 1
    assert net.terminal_index("M1", "S") == 2 and net.terminal_index("M1", "3") == 2
    assert net.terminal_node("m1", "d") == "d"
    with pytest.raises(NetlistError, match=r"element M1 has no terminal 'b'; accepted: names "
                       r"d, g, s or positions 1..3"):
        net.terminal_index("M1", "b")
    with pytest.raises(NetlistError, match="accepted: names 1, 2, p, n or positions 1..2"):
        net.terminal_index("R1", "3")


def test_a_port_name_wins_over_a_position() -> None:
    """A subcircuit whose ports are named "2" and "1": "2" is the port name."""
    net = parse("t\nX1 a b S\n.subckt S 2 1\n.ends\n")
    assert net.terminal_node("X1", "2") == "a"
    assert net.terminal_node("X1", "1") == "b"


def test_unknown_element_is_named() -> None:
    net = parse("t\nR1 a b 1\n")
    with pytest.raises(NetlistError, match="no element named 'R9' at top level"):
        net.element("R9")
    with pytest.raises(NetlistError, match="no element named 'R9'"):
        net.terminal_node("R9", "1")


def test_element_inside_subcircuit_is_not_a_top_level_element() -> None:
    net = parse("t\n.subckt S a\nR5 a 0 1\n.ends\nX1 n S\n")
    assert [e.name for e in net.elements] == ["X1"]
    with pytest.raises(NetlistError, match="no element named 'R5'"):
        net.element("R5")


# -- includes --------------------------------------------------------------------


def test_includes_are_relative_to_the_including_file(tmp_path: Path) -> None:
    """ngspice -b: a file included from sub/a.inc finds "b.inc" in sub/."""
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "a.inc").write_bytes(b"R2 x 0 1\n.include b.inc\n")
    (tmp_path / "sub" / "b.inc").write_bytes(b".subckt S p q\nR1 p q 1\n.ends\n")
    main = tmp_path / "main.cir"
    main.write_bytes(b"t\nR1 a 0 1\n.INC 'sub/a.inc'\nX1 a b S\n")
    net = read_netlist(main)
    assert [(e.name, e.file) for e in net.elements] == [
        ("R1", str(main)), ("R2", str(tmp_path / "sub" / "a.inc")), ("X1", str(main))
    ]
    assert net.element("X1").terminal_names == ("p", "q")
    assert net.subckts["s"].file == str(tmp_path / "sub" / "b.inc")


@pytest.mark.parametrize("keyword", [".include", ".INCLUDE", ".inc", ".incl"])
def test_include_keywords(tmp_path: Path, keyword: str) -> None:
    """ngspice -b: every keyword starting with ".inc" includes a file."""
    (tmp_path / "m.inc").write_bytes(b"R7 q 0 1\n")
    net = parse(f"t\n{keyword} \"m.inc\" ; models\n", tmp_path)
    assert net.element_names() == {"r7"}


def test_lib_sections(tmp_path: Path) -> None:
    """ngspice -b: ".lib FILE SECTION" reads only that section of FILE."""
    (tmp_path / "c.lib").write_bytes(
        b"R0 never 0 1\n.lib tt\nR1 a 0 1\n.endl tt\n.lib ff\nR1 b 0 1\n.endl\n"
    )
    net = parse("t\n.lib c.lib FF\n", tmp_path)
    assert net.element("R1").nodes == ("b", "0")
    assert net.element_names() == {"r1"}


def test_stdin_names_itself_in_errors(tmp_path: Path) -> None:
    with pytest.raises(NetlistError, match=r"^<stdin>:2: error: "):
        parse_netlist(b"t\nR1 a\n", "<stdin>", tmp_path)
