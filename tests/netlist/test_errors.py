"""Bad netlists: each raises NetlistError naming the file, the line and the
offending text, and the command line turns it into ``FILE:LINE: error: ...``
with exit code 1. Where ngspice also refuses the input, the docstring says so
(checked with ``ngspice -b`` on the same small deck)."""

from __future__ import annotations

import sys
from pathlib import Path

import click
import pytest
from click.testing import CliRunner

from parasite.cli import reports_input_errors
from parasite.errors import NetlistError, ParasiteError
from parasite.netlist import parse_netlist, read_netlist


def parse(text: str, base: Path | None = None):  # type: ignore[no-untyped-def]
    return parse_netlist(text.encode(), "bad.cir", base or Path("."))


@pytest.mark.parametrize(
    "card, message",
    [
        ("R1 a", r"bad.cir:2: error: R1: a resistor needs 2 nodes \(1, 2\), found 1 field\(s\) "
                 r"that can be nodes \(form: RXXX n\+ n- <value> <mname>\); card: 'R1 a'"),
        ("R1 a r=1k", r"bad.cir:2: error: R1: a resistor needs 2 nodes .*card: 'R1 a r=1k'"),
        ("C1 a {cval}", r"bad.cir:2: error: C1: a capacitor needs 2 nodes"),
        ("M1 d g", r"M1: a MOSFET needs at least 3 nodes and a model name, found 2"),
        ("E1 a b c", r"E1: a voltage-controlled voltage source needs 4 nodes \(p, n, cp, cn\), "
                     "found 3"),
        ("E1 a b poly(x) c d 1", r"E1: POLY needs its dimension as a positive integer"),
        ("G1 a b poly(2) c d 1", r"G1: POLY\(2\) needs 4 controlling nodes, found 3"),
        ("S1 a b c d", r"S1: a voltage-controlled switch needs a model name after its nodes"),
        ("X1", r"X1: a subcircuit instance needs the subcircuit's name"),
        ("A1 [a b]", r"A1: an XSPICE instance needs a model name at the end"),
    ],
)
def test_missing_nodes(card: str, message: str) -> None:
    with pytest.raises(NetlistError, match=message):
        parse(f"title\n{card}\n")


def test_missing_nodes_on_a_continued_card_points_at_its_first_line() -> None:
    with pytest.raises(NetlistError, match=r"^bad.cir:3: error: R1: .*card: 'R1 a'"):
        parse("title\n* c\nR1\n+ a\n")


def test_unterminated_subckt() -> None:
    """ngspice -b refuses it too ("Mismatch of .subckt ... .ends statements")."""
    with pytest.raises(NetlistError, match=r"^bad.cir:3: error: .subckt DRV has no matching "
                       r"\.ends before the end of the netlist"):
        parse("title\nR1 a 0 1\n.subckt DRV a b\nR1 a b 1\n.end\n")


def test_ends_without_subckt() -> None:
    """ngspice -b refuses it too ("Mismatch of .subckt ... .ends statements")."""
    with pytest.raises(NetlistError, match=r"^bad.cir:5: error: \.ends without an open "
                       r"\.subckt: '\.ends DRV'"):
        parse("title\n.subckt DRV a\n.ends\nR1 a 0 1\n.ends DRV\n")


def test_continuation_with_nothing_before_it(tmp_path: Path) -> None:
    """In an included file a first '+' line has no card to continue; ngspice
    glues it onto the card before the .include (checked: it then fails)."""
    (tmp_path / "x.inc").write_bytes(b"* models\n+ R9 a 0 1\n")
    with pytest.raises(NetlistError, match=r"x.inc:2: error: continuation line \('\+' first\) "
                       r"with no card before it in this file: '\+ R9 a 0 1'"):
        parse("title\nR1 a 0 1\n.include x.inc\n", tmp_path)


def test_missing_include_file(tmp_path: Path) -> None:
    """ngspice -b refuses it too (exit 1)."""
    with pytest.raises(NetlistError, match=r"^bad.cir:3: error: \.include file 'sub/none.lib' "
                       r"not found \(looked for '.*sub/none.lib', relative to the folder of the "
                       r"including file\)"):
        parse("title\n* c\n.include sub/none.lib\n", tmp_path)


def test_include_cycle(tmp_path: Path) -> None:
    (tmp_path / "a.inc").write_bytes(b"R1 a 0 1\n.inc b.inc\n")
    (tmp_path / "b.inc").write_bytes(b"R2 b 0 1\n\n.inc a.inc\n")
    main = tmp_path / "main.cir"
    main.write_bytes(b"title\n.inc a.inc\n")
    with pytest.raises(NetlistError, match=r"b.inc:3: error: include cycle: .*a.inc -> "
                       r".*b.inc -> .*a.inc"):
        read_netlist(main)


def test_file_including_itself(tmp_path: Path) -> None:
    main = tmp_path / "self.cir"
    main.write_bytes(b"title\nR1 a 0 1\n.include self.cir\n")
    with pytest.raises(NetlistError, match=r"self.cir:3: error: include cycle"):
        read_netlist(main)


def test_element_name_used_twice() -> None:
    """ngspice -b refuses it too ("device already exists"), without case."""
    with pytest.raises(NetlistError, match=r"^bad.cir:4: error: element name 'r1' is used twice "
                       r"at top level \(names are compared without case\); the first is at "
                       r"bad.cir:2"):
        parse("title\nR1 a 0 1\nC1 a 0 1\nr1 b 0 2\n")


def test_element_name_used_twice_in_one_subcircuit() -> None:
    with pytest.raises(NetlistError, match=r"bad.cir:4: error: element name 'R1' is used twice "
                       r"in \.subckt S"):
        parse("title\n.subckt S a\nR1 a 0 1\nR1 a 0 2\n.ends\n")


def test_same_name_is_fine_in_other_scopes_and_other_if_branches() -> None:
    net = parse("title\nR1 a 0 1\n.subckt S a\nR1 a 0 1\n.ends\n.subckt T a\nR1 a 0 1\n.ends\n"
                ".if (x == 1)\nR2 a 0 1\n.else\nR2 a 0 2\n.endif\n")
    assert net.element("R2").nodes == ("a", "0")
    with pytest.raises(NetlistError, match="element name 'R2' is used twice"):
        parse("title\n.if (x == 1)\nR2 a 0 1\n.endif\nR2 a 0 2\n")


def test_lib_without_section(tmp_path: Path) -> None:
    """ngspice -b: ".lib FILE" alone is "unimplemented control card - error"."""
    (tmp_path / "m.lib").write_bytes(b".lib tt\nR1 a 0 1\n.endl\n")
    with pytest.raises(NetlistError, match=r"bad.cir:2: error: '\.lib m.lib' starts a library "
                       r"section, which is only read through '\.lib FILE SECTION'"):
        parse("title\n.lib m.lib\n", tmp_path)


def test_lib_section_not_found(tmp_path: Path) -> None:
    (tmp_path / "m.lib").write_bytes(b".lib tt\nR1 a 0 1\n.endl\n")
    with pytest.raises(NetlistError, match=r"bad.cir:2: error: library section 'ss' not found "
                       r"in '.*m.lib'"):
        parse("title\n.lib m.lib ss\n", tmp_path)


@pytest.mark.parametrize(
    "card, message",
    [
        (".model dx", r"\.model needs a name and a type: '\.model dx'"),
        (".subckt", r"\.subckt needs a name: '\.subckt'"),
        (".include", r"\.include names no file: '\.include'"),
    ],
)
def test_incomplete_dot_cards(card: str, message: str) -> None:
    with pytest.raises(NetlistError, match=r"bad.cir:2: error: " + message):
        parse(f"title\n{card}\n")


def test_unreadable_netlist(tmp_path: Path) -> None:
    missing = tmp_path / "none.cir"
    with pytest.raises(NetlistError, match=r"none.cir: error: cannot read the netlist: "):
        read_netlist(missing)


def test_errors_are_parasite_errors_with_file_and_line() -> None:
    with pytest.raises(ParasiteError) as info:
        parse("title\nR1 a\n")
    assert info.value.file == "bad.cir" and info.value.line == 2


def test_command_line_prints_file_line_error_and_exits_1(tmp_path: Path) -> None:
    """The command line's error wrapper (parasite.cli.reports_input_errors)
    turns a netlist error into its message on standard error and exit code 1."""
    bad = tmp_path / "bad.cir"
    bad.write_bytes(b"title\nV1 in 0 1\nR1 in\n")

    @click.command()
    @click.argument("netlist")
    @reports_input_errors
    def load(netlist: str) -> None:
        read_netlist(netlist)

    result = CliRunner().invoke(load, [str(bad)])
    assert result.exit_code == 1
    assert result.stderr.startswith(f"{bad}:3: error: R1: a resistor needs 2 nodes")
    assert result.stdout == ""


@pytest.mark.skipif(sys.platform == "win32", reason="uses a POSIX path")
def test_report_subcommand_refuses_a_bad_netlist(tmp_path: Path) -> None:
    """The real command line, when its report subcommand is installed."""
    from parasite.cli import main

    if "report" not in main.list_commands(click.Context(main)):
        pytest.skip("the report subcommand is not installed")
    bad = tmp_path / "bad.cir"
    bad.write_bytes(b"title\n.subckt S a\nR1 a 0 1\n")
    routes = tmp_path / "r.routes.toml"
    routes.write_text('format = "parasite-routes/1"\nunits = "mm"\n')
    result = CliRunner().invoke(main, ["report", str(bad), str(routes)])
    assert result.exit_code == 1
    assert f"{bad}:2: error: .subckt S has no matching .ends" in result.stderr
