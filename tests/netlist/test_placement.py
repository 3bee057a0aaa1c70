"""Where appended cards go: after the last top-level element, before the first
top-level analysis, output or control card, every original byte kept.

Expected bytes are written by hand from the rule (parasite/netlist/placement.py).
The rule's reason is checked against both simulators at the end: gnucap 0.36
runs each dot card when it reads it (seen in runs, docs/simulators.md), ngspice
39 reads the whole deck first; a resistor appended to a divider must change the
operating point in both.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from parasite.netlist import parse_netlist

BLOCK = ["* copper", "Rcu a z 1"]
INSERTED = b"* copper\nRcu a z 1\n"


def appended(deck: bytes, base: Path | None = None, block: list[str] | None = None) -> bytes:
    net = parse_netlist(deck, "t.cir", base or Path("."))
    net.append_cards(block or BLOCK)
    return net.to_bytes()


def test_after_the_last_element_before_models_options_and_analyses() -> None:
    deck = (b"t\nV1 a 0 1\nR1 a b 1k\n\n* models\n.model DX d (is=1e-14)\n.options reltol=1e-4\n"
            b".print tran v(a)\n.tran 1n 10n\n.end\n")
    want = deck.replace(b"R1 a b 1k\n", b"R1 a b 1k\n" + INSERTED)
    assert appended(deck) == want


def test_never_inside_a_subckt_and_after_the_last_top_level_element() -> None:
    deck = (b"t\nX1 a b S\n.subckt S p q\nR1 p q 1\nR2 q 0 1\n.ends\nR3 b 0 1\n"
            b".subckt T p\nR1 p 0 1\n.ends\n.op\n.end\n")
    assert appended(deck) == deck.replace(b"R3 b 0 1\n", b"R3 b 0 1\n" + INSERTED)


def test_after_the_last_continuation_line_of_the_last_element() -> None:
    deck = b"t\nV1 a 0\n* a comment between\n+ 1\n\n+ ; blank and comment lines between\n.op\n.end\n"
    want = deck.replace(b"+ ; blank", b"+ ; blank").replace(
        b"between\n.op", b"between\n" + INSERTED + b".op")
    assert appended(deck) == want


def test_crlf_file_keeps_its_line_ends_and_bytes() -> None:
    deck = b"t\r\nV1 a 0 1\r\nR1 a 0 1k \xb5\r\n.tran 1n 2n\r\n.end\r\n"
    assert appended(deck) == deck.replace(b".tran", b"* copper\r\nRcu a z 1\r\n.tran")


def test_missing_end_and_no_final_newline() -> None:
    assert appended(b"t\nV1 a 0 1\n.op") == b"t\nV1 a 0 1\n" + INSERTED + b".op"
    assert appended(b"t\nV1 a 0 1") == b"t\nV1 a 0 1\n" + INSERTED


def test_ic_and_nodeset_stay_after_the_block() -> None:
    """.ic and .nodeset name the original nodes; they are settings, not actions,
    and are not moved (gnucap 0.36 ignores both with a warning)."""
    deck = b"t\nV1 a 0 1\nC1 a 0 1n\n.ic v(a)=0.5\n.nodeset v(a)=0.4\n.tran 1n 2n uic\n.end\n"
    assert appended(deck) == deck.replace(b".ic", INSERTED + b".ic")


def test_after_an_include_that_brings_elements_not_one_of_models(tmp_path: Path) -> None:
    (tmp_path / "parts.cir").write_bytes(b"R2 a 0 1\n")
    (tmp_path / "models.lib").write_bytes(b".model DX d (is=1e-14)\n")
    (tmp_path / "lib.lib").write_bytes(b".lib typ\nR3 a 0 1\n.endl\n")
    deck = b"t\nV1 a 0 1\n.include parts.cir\n.include models.lib\n.tran 1n 2n\n.end\n"
    assert appended(deck, tmp_path) == deck.replace(b".include models", INSERTED + b".include models")
    deck = b"t\nV1 a 0 1\n.lib lib.lib typ\n.param x=1\n.op\n.end\n"
    assert appended(deck, tmp_path) == deck.replace(b".param", INSERTED + b".param")


def test_an_if_block_with_elements_is_not_split() -> None:
    deck = b"t\nV1 a 0 1\n.if (1)\nR1 a 0 1\n.else\nR1 a 0 2\n.endif\n.op\n.end\n"
    assert appended(deck) == deck.replace(b".op", INSERTED + b".op")


def test_a_control_block_stays_after_the_block() -> None:
    deck = b"t\nV1 a 0 1\n.control\nop\nprint v(a)\n.endc\n.end\n"
    assert appended(deck) == deck.replace(b".control", INSERTED + b".control")


def test_no_element_goes_before_the_comments_of_the_first_action() -> None:
    deck = b"t\n.param x=1\n\n* the analysis\n.op\n.end\n"
    block = ["* copper", "Vcu a 0 1"]
    assert appended(deck, block=block) == deck.replace(b"\n\n* the", b"\n* copper\nVcu a 0 1\n\n* the")


def test_an_element_after_the_first_analysis_still_comes_first() -> None:
    """An element after .tran (or after .end, which ngspice still reads): the
    copper is wired to elements' terminals, so it follows the last element."""
    deck = b"t\nV1 a 0 1\n.tran 1n 2n\nR2 a 0 1\n.end\n"
    assert appended(deck) == deck.replace(b"R2 a 0 1\n", b"R2 a 0 1\n" + INSERTED)
    deck = b"t\nV1 a 0 1\n.op\n.end\nR2 a 0 1\n"
    assert appended(deck) == deck + INSERTED


def test_unchanged_netlist_round_trips() -> None:
    deck = b"t\r\nV1 a 0 1 ; x\r\n.subckt S p\r\nR1 p 0 1\r\n.ends\r\n.op\r\n.end"
    assert parse_netlist(deck, "t.cir", Path(".")).to_bytes() == deck


# -- the reason, in both simulators ------------------------------------------------

DIVIDER = b"divider\nV1 a 0 DC 1\nR1 a b 1k\nR2 b 0 1k\n.print op v(b)\n.op\n.end\n"


@pytest.mark.gnucap
@pytest.mark.ngspice
@pytest.mark.skipif(shutil.which("gnucap") is None, reason="gnucap is not installed")
def test_appended_resistor_changes_the_operating_point_in_both_simulators(tmp_path: Path) -> None:
    """A 1k resistor appended in parallel with R2 makes v(b) = 1/3 V (Ohm's law,
    a divider of 1k over 500 ohm); before the change it is 1/2 V. Both
    simulators print 5 digits or more: tolerance 1e-4."""
    from parasite.spice import run_ngspice
    from parasite.spice.gnucap import run_gnucap

    deck = appended(DIVIDER, block=["Rcu b 0 1k"])
    gnucap_vb = run_gnucap(deck, base_dir=tmp_path).table("temp")["v(b)"][0]
    ngspice_vb = run_ngspice(deck, base_dir=tmp_path).vector("v(b)")[0]
    assert gnucap_vb == pytest.approx(1 / 3, rel=1e-4)
    assert float(ngspice_vb) == pytest.approx(1 / 3, rel=1e-4)
    before = run_gnucap(DIVIDER, base_dir=tmp_path).table("temp")["v(b)"][0]
    assert before == pytest.approx(0.5, rel=1e-4)
