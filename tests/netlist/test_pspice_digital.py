"""Element letters whose meaning depends on the dialect, told apart by form.

ngspice 39 reads ``U`` as a uniform distributed RC line, and, in its PSpice
compatibility mode (``set ngbehavior=psa``), as a PSpice-style digital
primitive that it translates into XSPICE gates. The fixtures in
fixtures/netlists/pspice/ are invented circuits of that second kind; ngspice
itself is the outside reference: it runs them (with the ``.spiceinit`` kept
beside them), and its translation (printed with ``set ngdebug``) names the
nodes of every primitive, which must be the nodes the reader finds.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from parasite.cli import main
from parasite.errors import NetlistError, ParasiteError
from parasite.netlist import parse_netlist, read_netlist

from .test_netlist_support import FIXTURES, needs_ngspice, run_deck

PSPICE = FIXTURES / "pspice"
DECKS = sorted(PSPICE.glob("*.cir"))
NO_COPPER = 'format = "parasite-routes/1"\nunits = "mm"\n\n[layers.top]\nz = 1.565\nthickness = 0.035\n'


def _id(path: Path) -> str:
    return path.name


def test_there_are_pspice_digital_fixtures() -> None:
    assert len(DIGITAL_DECKS) >= 2


@pytest.mark.parametrize("path", DECKS, ids=_id)
def test_augment_without_copper_gives_the_bytes_back(path: Path, tmp_path: Path) -> None:
    """Command-line contract: a routes file that places no copper gives the
    input back byte for byte, also for PSpice-style digital netlists."""
    routes = tmp_path / "empty.routes.toml"
    routes.write_text(NO_COPPER)
    out = tmp_path / "out.cir"
    r = CliRunner().invoke(main, ["augment", str(path), str(routes), "-o", str(out)])
    assert r.exit_code == 0, r.output
    assert out.read_bytes() == path.read_bytes()
    assert read_netlist(path).to_bytes() == path.read_bytes()


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("path", DECKS, ids=_id)
def test_ngspice_runs_the_fixture_in_pspice_mode(path: Path, tmp_path: Path) -> None:
    """ngspice 39 with ``set ngbehavior=psa`` (the .spiceinit beside the
    fixtures): exit 0, nothing wrong in the log, and time points."""
    run = run_deck(path.read_bytes(), path.parent, tmp_path)
    assert run.returncode == 0, run.log + run.stdout
    assert run.failures() == []
    assert run.plots and len(run.plots[0]["time"]) > 10


@needs_ngspice
@pytest.mark.ngspice
def test_gate_chain_inverts_with_its_delay(tmp_path: Path) -> None:
    """A buffer then an inverter: the driven node is the complement of the
    input once the 4-6 ns gate delays have passed (the timing model's values;
    common practice for logic). Checked at mid-pulse, 30 ns after each edge,
    against 3.3 V logic: high above 2.5 V, low below 0.8 V."""
    path = PSPICE / "gate_chain.cir"
    run = run_deck(path.read_bytes(), path.parent, tmp_path)
    plot = run.plots[0]
    t, vin, vdrv = plot["time"], plot["v(in)"], plot["v(drv)"]
    for when in (41e-9, 81e-9, 141e-9, 181e-9):
        i = int(np.searchsorted(t, when))
        high_in = vin[i] > 2.5
        assert (vdrv[i] < 0.8) if high_in else (vdrv[i] > 2.5), (when, vin[i], vdrv[i])


def _u_cards(text: str) -> list[str]:
    """The U cards of a fixture, continuation lines joined, comments cut."""
    cards: list[str] = []
    for line in text.splitlines():
        body = line.split(";")[0].rstrip()
        if body[:1] in "uU":
            cards.append(body)
        elif body.startswith("+") and cards and cards[-1][:1] in "uU":
            cards[-1] += " " + body[1:].strip()
    return cards


DIGITAL_DECKS = [p for p in DECKS if _u_cards(p.read_text())]


# Where ngspice's XSPICE translation puts each PSpice pin (ngspice 39 manual,
# chapter 12, digital code models: d_dff ports are data clk set reset out Nout;
# gates: [inputs] output; d_tristate: in enable out). Flip-flop set/reset are
# fed through inverters named not_<instance>_<node>, so those two are checked
# by the inverter's input.
_DFF = ("d1", "clk", "preb", "clrb", "q1", "qb1")


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("path", DIGITAL_DECKS, ids=_id)
def test_nodes_agree_with_ngspice_translation(path: Path, tmp_path: Path) -> None:
    run_dir = tmp_path / "work"
    run_dir.mkdir()
    (run_dir / ".spiceinit").write_text("set ngbehavior=psa\nset ngdebug\n")
    run = run_deck(path.read_bytes(), run_dir, tmp_path)
    text = run.log + run.stdout
    repl = {}
    inverters = {}
    for m in re.finditer(r"^Replacement: (a\S+)\s+(.*?)\s+\S+$", text, re.MULTILINE):
        name, fields = m.group(1), m.group(2).replace("[", " ").replace("]", " ").split()
        repl[name] = fields
        if len(fields) == 2 and fields[1].startswith("not_"):
            inverters[fields[1]] = fields[0]
    cards = _u_cards(path.read_text())
    assert cards
    checked = 0
    for card in cards:
        name = card.split()[0]
        net = parse_netlist(("t\n" + card + "\n").encode(), "t.cir", tmp_path)
        el = net.element(name)
        ours = dict(zip(el.terminal_names, el.nodes, strict=True))
        key = "a" + name.lower()
        if key in repl:
            theirs = repl[key]
            expect = [n for t, n in ours.items() if t not in ("dpwr", "dgnd")]
            assert theirs == expect, (name, theirs, expect)
        else:
            theirs = repl[key + "_0"]
            want = [ours[t] for t in _DFF]
            got = [inverters.get(f, f) for f in theirs]
            assert got == want, (name, got, want)
        checked += 1
    assert checked == len(cards)


def test_urc_line_keeps_its_meaning_when_a_node_is_named_like_a_gate(tmp_path: Path) -> None:
    """ngspice 39 manual, 6.2: ``UXXX n1 n2 n3 mname l=len`` with a ``urc``
    model. A first node called ``buf`` does not make it a digital primitive."""
    net = parse_netlist(b"t\nU1 buf b 0 um l=1m\n.model um urc\nR1 buf 0 1k $ note\n",
                        "t.cir", tmp_path)
    assert net.element("U1").nodes == ("buf", "b", "0")
    assert net.warnings == []


def test_dollar_is_a_comment_outside_pspice_mode(tmp_path: Path) -> None:
    """ngspice 39 without a compatibility mode: '$' after a blank starts a
    comment (checked with ngspice -b; ngspice-facts.md)."""
    net = parse_netlist(b"t\nR1 a 0 1k $ x y\n", "t.cir", tmp_path)
    assert net.card_text("R1").rstrip() == "R1 a 0 1k"
    assert net.element("R1").nodes == ("a", "0")


def test_digital_primitive_nodes_and_pspice_mode_warning(tmp_path: Path) -> None:
    """PSpice digital primitive form: type(params) dpwr dgnd pins tmodel iomodel;
    AND(3) has 3 inputs and one output. The reader says which mode it assumed."""
    deck = b"t\nU5 AND(3) $G_DPWR $G_DGND a b c y TM IO MNTYMXDLY=0\n"
    net = parse_netlist(deck, "t.cir", tmp_path)
    el = net.element("U5")
    assert el.nodes == ("$g_dpwr", "$g_dgnd", "a", "b", "c", "y")
    assert el.terminal_names == ("dpwr", "dgnd", "in1", "in2", "in3", "out")
    assert el.model == "tm"
    assert net.terminal_node("U5", "out") == "y"
    assert any("PSpice compatibility mode" in w for w in net.warnings)
    assert net.to_bytes() == deck


@pytest.mark.parametrize("card", [
    "U7 LOGICEXP(2,1) $G_DPWR $G_DGND a b y D0 IO LOGIC: y = {a & b}",
    "U8 AND(2) $G_DPWR $G_DGND a y TM IO",   # one input short
    "U9 weird",
])
def test_unknown_forms_pass_through(card: str, tmp_path: Path) -> None:
    """An element of unknown form is kept as written; its terminals cannot take
    copper (an error naming it), and nothing else fails."""
    deck = f"t\nR1 a 0 1k\n{card}\n.end\n".encode()
    net = parse_netlist(deck, "t.cir", tmp_path)
    assert net.to_bytes() == deck
    name = card.split()[0]
    assert [e.name for e in net.elements] == ["R1", name]
    with pytest.raises(NetlistError, match=name):
        net.terminal_node(name, "1")


def test_pspice_analog_forms_give_their_nodes() -> None:
    """PSpice-style analog cards that ngspice's PSpice mode accepts (it runs
    analog_compat.cir, above): E/G ``VALUE =`` and ``TABLE`` have two nodes, a
    VSWITCH ``S`` card four, ``TC = a, b`` after a resistor's value is no node
    (forms: ngspice 39 manual, 5.2-5.4 and its PSpice compatibility chapter)."""
    net = read_netlist(PSPICE / "analog_compat.cir")
    got = {el.name: el.nodes for el in net.elements}
    assert got == {
        "VIN": ("in", "0"), "EAMP": ("amp", "0"), "ELIM": ("lim", "0"),
        "GLOAD": ("amp", "0"), "SSW": ("out", "0", "lim", "0"), "RPULL": ("vcc", "out"),
        "VCC": ("vcc", "0"), "COUT": ("out", "0"),
    }
    assert net.warnings == []


def test_copper_beside_an_unknown_form_and_a_pin_on_it(tmp_path: Path) -> None:
    """With copper on other nets, a U card of unknown form is written back
    untouched; a pin on one of its terminals is an error that names it."""
    from parasite.augment import augment_files
    from tests.boards import ONE_LAYER as HEAD
    from tests.boards import pin as _pin
    from tests.boards import trace as _trace

    odd = "U9 LOGICEXP(2,1) $G_DPWR $G_DGND a b y D0 IO"
    net = tmp_path / "c.cir"
    net.write_text(f"t\nV1 a 0 DC 1\nR1 a b 1\nC1 b 0 1n\n{odd}\n.tran 1n 10n\n.end\n")
    routes = tmp_path / "c.routes.toml"
    routes.write_text(HEAD + _trace("b", [(0, 0), (10, 0)], 0.5)
                      + _pin("R1:2", (0, 0)) + _pin("C1:1", (10, 0)))
    out = augment_files(str(net), str(routes)).netlist_bytes.decode()
    assert f"\n{odd}\n" in out
    routes.write_text(HEAD + _trace("b", [(0, 0), (10, 0)], 0.5)
                      + _pin("R1:2", (0, 0)) + _pin("U9:1", (10, 0)))
    with pytest.raises(ParasiteError, match=r"c\.routes\.toml:\d+: error: pin\[1\]\.terminal: "
                       r"terminal 'U9:1': element U9 has no terminal"):
        augment_files(str(net), str(routes))


def test_digital_primitives_in_an_included_library(tmp_path: Path) -> None:
    """The usual layout: gates in a library file, read where it is included;
    the whole netlist is then read in the PSpice mode's way (ngspice applies
    the mode to every file, checked with ngspice -b)."""
    lib = tmp_path / "gates.lib"
    lib.write_text(".subckt inv1 a y\nU1 INV $G_DPWR $G_DGND a y TM IO\n"
                   ".model TM ugate\n.model IO uio\n.ends\n")
    main = tmp_path / "top.cir"
    main.write_bytes(b"t\r\n.include gates.lib\r\nX1 in out inv1\r\nR1 out 0 1k\r\n.end\r\n")
    net = read_netlist(main)
    assert net.to_bytes() == main.read_bytes()
    assert [e.nodes for e in net.elements] == [("in", "out"), ("out", "0")]
    assert any(w.startswith(f"{tmp_path / 'gates.lib'}:2: warning: U1 is a PSpice-style")
               for w in net.warnings), net.warnings
    assert "$g_dpwr" in net.node_names()


def test_unknown_form_fields_count_as_node_names_and_its_reason_is_given() -> None:
    """A card whose nodes cannot be told: every field that could be a node counts
    as a taken node name (generated names never collide with one), and a pin on
    it is refused with the reason the reader found (common practice: a superset
    of names is the safe side)."""
    text = b"t\nU1 LOGICEXP(2,1) $G_DPWR $G_DGND a b y dly io_std\nR1 a 0 1k\n.end\n"
    net = parse_netlist(text, "x.cir", Path("."))
    assert {"y", "dly", "io_std"} <= net.node_names()
    with pytest.raises(NetlistError, match=r"x\.cir:2: .*U1 has no terminal '1'; accepted: none: .*LOGICEXP"):
        net.terminal_index("U1", "1")
