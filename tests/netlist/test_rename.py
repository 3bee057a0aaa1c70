"""Renaming a terminal's node and appending cards.

A rename changes exactly one token of the file. Checked against ngspice: the
renamed netlist, with the old and new nodes joined by a 0 V source, has the
operating point of the original, and the current in that source equals
ngspice's own terminal current of the device (so the token renamed really is
that terminal's node).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from parasite.errors import NetlistError
from parasite.netlist import parse_netlist, read_netlist

from .test_netlist_support import DEMO, FIXTURES, insert_after_title, needs_ngspice, read_raw, run_deck


def parse(data: bytes, base: Path | None = None):  # type: ignore[no-untyped-def]
    return parse_netlist(data, "t.cir", base or Path("."))


def changed_span(old: bytes, new: bytes) -> tuple[bytes, bytes, int]:
    """Where ``new`` differs from ``old`` by one replaced field: (the old field,
    what replaced it, offset). The old field runs from the first differing byte
    to the next blank or separator."""
    i = 0
    while i < min(len(old), len(new)) and old[i] == new[i]:
        i += 1
    j = i
    while j < len(old) and old[j : j + 1] not in b" \t\r\n,()=[]":
        j += 1
    tail = old[j:]
    assert new.endswith(tail), "more than one field changed"
    return old[i:j], new[i : len(new) - len(tail)], i


RENAMES = [
    # (deck, element, terminal, the node token as written, its byte offset)
    (b"t\nR1 a b 1k\n", "R1", "2", b"b", 7),
    (b"t\nR1  a\tB  1k ; c\n", "r1", "n", b"B", 8),
    (b"t\r\nM1 dd gg ss vd\r\n.model vd VDMOS\r\n", "M1", "s", b"ss", 12),
    (b"t\nR1 in\n* c\n+ out\n+ 1k\n", "R1", "2", b"out", 14),
    (b"t\nE1 p n POLY(2) a 0 b GND 0 1 1\n", "E1", "cn2", b"GND", 23),
    (b"t\nA1 [x y] ~dig q mod\n.model mod d_and\n", "A1", "3", b"dig", 12),
    (b"t\nX1 a b S p=1\n.subckt S in out\n.ends\n", "X1", "out", b"b", 7),
    (b"t\nQ1 c,b (e) s qm\n.model qm npn\n", "Q1", "e", b"e", 10),
]


@pytest.mark.parametrize("deck, name, terminal, token, offset", RENAMES)
def test_rename_changes_exactly_that_token(
    deck: bytes, name: str, terminal: str, token: bytes, offset: int
) -> None:
    net = parse(deck)
    net.rename_terminal(name, terminal, "new_node_7")
    out = net.to_bytes()
    assert changed_span(deck, out) == (token, b"new_node_7", offset)
    assert net.terminal_node(name, terminal) == "new_node_7"
    assert "new_node_7" in net.node_names()
    assert parse(out).terminal_node(name, terminal) == "new_node_7"


def test_renames_of_two_tokens_on_one_line_keep_the_others_in_place() -> None:
    deck = b"t\nM1 d g s b nm w=1u\n.model nm nmos\n"
    net = parse(deck)
    net.rename_terminal("M1", "g", "a_much_longer_gate_node")
    net.rename_terminal("M1", "b", "x")
    net.rename_terminal("M1", "d", "d2")
    assert net.to_bytes() == b"t\nM1 d2 a_much_longer_gate_node s x nm w=1u\n.model nm nmos\n"
    assert net.element("M1").nodes == ("d2", "a_much_longer_gate_node", "s", "x")


def test_rename_to_ground_name() -> None:
    net = parse(b"t\nR1 a b 1\n")
    net.rename_terminal("R1", "1", "GND")
    assert net.terminal_node("R1", "1") == "0"


@pytest.mark.parametrize("bad", ["", "a b", "x;y", "{x}", "+x", "a//b", "x=1", "x,y", "(x)",
                                 "$x", "*x", "a'b", "x\ny"])
def test_rename_refuses_names_that_would_change_the_card(bad: str) -> None:
    net = parse(b"t\nR1 a b 1\n")
    with pytest.raises(NetlistError, match=r"t.cir:2: error: cannot rename terminal '1' of R1 "
                       r"to .*: a node name must be a letter, digit or '_'"):
        net.rename_terminal("R1", "1", bad)
    assert net.to_bytes() == b"t\nR1 a b 1\n"


def test_rename_in_an_included_file_is_refused(tmp_path: Path) -> None:
    (tmp_path / "inc.cir").write_bytes(b"R2 a 0 1\n")
    net = parse(b"t\n.include inc.cir\n", tmp_path)
    with pytest.raises(NetlistError, match=r"inc.cir:1: error: element R2 is in the included "
                       r"file .*inc.cir, which is never rewritten"):
        net.rename_terminal("R2", "1", "z")


def test_append_goes_before_top_level_end() -> None:
    deck = b"t\n.subckt S a\nR1 a 0 1\n.end_not\n.ends\nR1 a 0 1\n.END\n* after\n"
    net = parse(deck)
    net.append_cards(["R9 a z 1", "* note"])
    assert net.to_bytes() == deck.replace(b".END\n", b"R9 a z 1\n* note\n.END\n")
    assert net.element("R9").nodes == ("a", "z")
    assert "z" in net.node_names() and "r9" in net.element_names()


def test_append_at_end_of_file_without_end_or_final_newline() -> None:
    net = parse(b"t\r\nR1 a 0 1")
    net.append_cards(["R2 a 0 2"])
    assert net.to_bytes() == b"t\r\nR1 a 0 1\r\nR2 a 0 2\r\n"


def test_append_before_a_control_block_left_open() -> None:
    """ngspice -b accepts a .control block without .endc (with a warning)."""
    net = parse(b"t\nR1 a 0 1\n.control\nop\n")
    assert net.warnings == ["t.cir:3: warning: .control has no .endc"]
    net.append_cards(["R2 a 0 2"])
    assert net.to_bytes() == b"t\nR1 a 0 1\nR2 a 0 2\n.control\nop\n"
    assert net.warnings == ["t.cir:4: warning: .control has no .endc"]


def test_append_to_an_empty_netlist_keeps_a_title_line() -> None:
    net = parse(b"")
    net.append_cards(["R2 a 0 2"])
    assert net.to_bytes() == b"\nR2 a 0 2\n"
    assert net.element("R2").nodes == ("a", "0")


def test_append_in_error_changes_nothing() -> None:
    deck = b"t\nR1 a 0 1\n.end\n"
    net = parse(deck)
    with pytest.raises(NetlistError, match=r"t.cir:3: error: element name 'r1' is used twice"):
        net.append_cards(["r1 b 0 1"])
    assert net.to_bytes() == deck and net.element_names() == {"r1"}
    with pytest.raises(NetlistError, match="an appended card must be one line"):
        net.append_cards(["R5 a 0 1\nR6 a 0 1"])
    net.rename_terminal("R1", "1", "q")  # still usable
    assert net.to_bytes() == b"t\nR1 q 0 1\n.end\n"


# -- against ngspice ---------------------------------------------------------------

OPTIONS = ".options reltol=1e-7 abstol=1e-15 vntol=1e-10\n"


def op_point(deck: bytes, workdir: Path, tmp: Path, saves: str) -> dict[str, float]:
    """ngspice's operating point of ``deck`` (a .control block after the title
    runs ``op`` and quits, so the deck's own analyses do not run)."""
    raw = tmp / "op.raw"
    if raw.exists():
        raw.unlink()
    probe = insert_after_title(
        deck, OPTIONS + f".control\nsave all {saves}\nop\nwrite {raw}\nquit\n.endc\n"
    )
    run = run_deck(probe, workdir, tmp)
    assert run.returncode == 0 and run.failures() == [], run.log
    (plot,) = read_raw(raw.read_bytes())
    return {k: float(np.real(v[0])) for k, v in plot.items()}


# (netlist, element, terminal, ngspice's current into that terminal as
#  (device parameter, sign)): i(Vjoin) = current leaving the device at the
#  terminal = -(current into the terminal). For a resistor, @r[i] flows into
#  terminal 1 and out of terminal 2.
OP_CASES = [
    (FIXTURES / "comments.cir", "R3", "2", ("@r3[i]", +1)),
    (FIXTURES / "comments.cir", "R5", "2", ("@r5[i]", +1)),  # node "c$d"
    (FIXTURES / "crlf_oddcase.cir", "rSeries", "1", ("@rseries[i]", -1)),
    (FIXTURES / "after_end.cir", "Rload", "1", ("@rload[i]", -1)),  # card after .end
    (FIXTURES / "semiconductors.cir", "Q1", "c", ("@q1[ic]", -1)),
    (FIXTURES / "semiconductors.cir", "Q2", "b", ("@q2[ib]", -1)),
    (FIXTURES / "half_bridge.cir", "Mlow", "s", ("@mlow[is]", -1)),
    (FIXTURES / "controlled.cir", "Epoly", "cn2", None),  # a controlling node: no current
    (FIXTURES / "nested_subckt.cir", "X1", "top", ("@r1[i]", -1)),  # fed through R1 only
    (FIXTURES / "gate_driver.cir", "Xdrv", "vdd", None),
    (FIXTURES / "params.cir", "Xfilt", "a", None),
    (FIXTURES / "tline_edge.cir", "T1", "p2", None),
    (DEMO / "buck.cir", "M1", "d", None),
]


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize(
    "path, name, terminal, current", OP_CASES, ids=[f"{c[0].name}-{c[1]}-{c[2]}" for c in OP_CASES]
)
def test_renamed_and_rejoined_netlist_has_the_same_operating_point(
    path: Path, name: str, terminal: str, current: tuple[str, int] | None, tmp_path: Path
) -> None:
    original = path.read_bytes()
    net = read_netlist(path)
    old_node = net.terminal_node(name, terminal)
    net.rename_terminal(name, terminal, "zz_split")
    renamed = net.to_bytes()
    old_part, new_part, _ = changed_span(original, renamed)
    assert new_part == b"zz_split" and old_part.lower().replace(b"gnd", b"0") == old_node.encode()
    net.append_cards([f"Vzz_join zz_split {old_node} 0"])

    saves = current[0] if current else ""
    before = op_point(original, path.parent, tmp_path, saves)
    after = op_point(net.to_bytes(), path.parent, tmp_path, saves)
    assert after["v(zz_split)"] == pytest.approx(before.get(f"v({old_node})", 0.0), abs=1e-9)
    for key, value in before.items():
        assert after[key] == pytest.approx(value, rel=1e-6, abs=1e-12), key
    if current is None:
        if name == "Epoly":
            assert after["i(vzz_join)"] == pytest.approx(0.0, abs=1e-15)
        return
    param, sign = current
    device_current = before[f"i({param})"]
    assert abs(device_current) > 1e-7, "pick a terminal that carries current"
    assert after["i(vzz_join)"] == pytest.approx(sign * device_current, rel=1e-5, abs=1e-13)
