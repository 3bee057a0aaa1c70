"""Every netlist fixture: byte-exact round trip, a real ngspice run, and the
reader's nodes against ngspice's own reading of the same file.

The fixtures (fixtures/netlists/*.cir and the demo fixtures/demo/buck.cir) are
netlists of our own; each has an analysis, so ``ngspice -b -r`` simulates it.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from parasite.netlist import read_netlist

from .test_netlist_support import DEMO, FIXTURES, listing, needs_ngspice, run_deck

DECKS = sorted(FIXTURES.glob("*.cir")) + [DEMO / "buck.cir"]
INCLUDED = sorted((FIXTURES / "lib").glob("*"))


def _id(path: Path) -> str:
    return path.name


def test_there_are_enough_fixtures() -> None:
    """The issue asks for at least 15 netlists of our own."""
    assert len(list(FIXTURES.glob("*.cir"))) >= 15


@pytest.mark.parametrize("path", DECKS, ids=_id)
def test_round_trip_is_byte_identical(path: Path) -> None:
    data = path.read_bytes()
    before = {p: p.read_bytes() for p in INCLUDED}
    net = read_netlist(path)
    assert net.to_bytes() == data
    assert {p: p.read_bytes() for p in INCLUDED} == before


def test_crlf_fixture_really_has_crlf_and_latin1() -> None:
    """Guard against an editor or git converting the byte-exact fixture."""
    data = (FIXTURES / "crlf_oddcase.cir").read_bytes()
    assert data.count(b"\r\n") == data.count(b"\n") > 10
    assert b"\xb5F" in data  # Latin-1 micro sign: not valid UTF-8
    with pytest.raises(UnicodeDecodeError):
        data.decode("utf-8")


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("path", DECKS, ids=_id)
def test_ngspice_simulates_every_fixture(path: Path, tmp_path: Path) -> None:
    """Exit code 0, no error in the log, and results: raw data points, or for a
    deck driven by its own .control block, printed values."""
    run = run_deck(path.read_bytes(), path.parent, tmp_path)
    assert run.returncode == 0, run.log + run.stdout
    assert run.failures() == []
    points = sum(len(next(iter(p.values()))) for p in run.plots if p)
    printed = re.search(r"^\S+\s+=\s+[-+0-9.]+e[-+]\d+", run.log + run.stdout, re.MULTILINE)
    assert points > 0 or printed is not None


# Elements whose ngspice listing line is not the card as written: ngspice
# rewrites behavioural E/G, POLY and TABLE sources into B and XSPICE devices,
# substitutes parameters and reformats numbers inside expressions.
_REWRITTEN = {"evol", "gcur", "epoly", "etab", "fpoly"}
_FIELDS = re.compile(r"[\s,()=\[\]]+")


def _fields(text: str) -> list[str]:
    return [("0" if f == "gnd" else f) for f in _FIELDS.split(text.strip().lower()) if f]


@needs_ngspice
@pytest.mark.ngspice
@pytest.mark.parametrize("path", DECKS, ids=_id)
def test_cards_agree_with_ngspice_listing(path: Path, tmp_path: Path) -> None:
    """ngspice's ``listing e`` shows each card as ngspice read it (comments cut,
    continuation lines joined, lower case). Every top-level card the reader
    found reads field for field as ngspice's, where ngspice keeps the card as
    written; its nodes are the first fields; and every element in the listing
    is one the reader saw (a dropped or invented card would show here)."""
    net = read_netlist(path)
    seen = listing(path.read_bytes(), path.parent, tmp_path)
    by_name: dict[str, list[str]] = {}
    for line in seen:
        fields = _fields(line)
        if fields and not fields[0].startswith("."):
            by_name.setdefault(fields[0], fields[1:])
    assert by_name, "ngspice listed no element"
    ours = net.element_names()
    keys = [el.key for el in net.elements]
    checked = 0
    for el in net.elements:
        if el.letter in "XB" or el.key in _REWRITTEN or el.key not in by_name:
            continue
        theirs = by_name[el.key]
        if el.letter != "A":  # XSPICE cards interleave port types with nodes
            assert tuple(theirs[: len(el.nodes)]) == el.nodes, el.name
        text = net.card_text(el.name)
        if "{" not in text and "'" not in text and keys.count(el.key) == 1:
            assert _fields(text) == [el.key, *theirs], el.name
        checked += 1
    assert checked > 0
    for name in by_name:
        if "." in name or "$" in name:
            continue  # flattened subcircuit elements, generated devices
        assert name in ours or name[1:] in ours, name


# Expected nodes written by hand from the fixtures' text (not from the reader).
HAND_EXPECTED = {
    "half_bridge.cir": {
        "Mhigh": (("bus", "gh", "mid"), ("d", "g", "s"), "feth"),
        "Mlow": (("mid", "gl", "0", "tj_low", "tc_low"), ("d", "g", "s", "tj", "tc"), "fetl"),
        "Vgh": (("gh_drv", "mid"), ("p", "n"), None),
    },
    "gate_driver.cir": {
        "Xdrv": (("logic", "vdd", "gate", "0"), ("logic", "vdd", "gate", "vss"), None),
        "M1": (("drain", "gate", "0"), ("d", "g", "s"), "sw_fet"),
    },
    "tline_edge.cir": {"T1": (("near", "0", "far", "0"), ("p1", "n1", "p2", "n2"), None)},
    "continuation.cir": {
        "R1": (("in", "n1"), ("1", "2"), None),
        "R2": (("n1", "n2"), ("1", "2"), None),
        "C3": (("n3", "0"), ("1", "2"), None),
        "D1": (("0", "n3"), ("a", "k"), "dclamp"),
    },
    "comments.cir": {
        "R2": (("a", "0"), ("1", "2"), None),
        "R4": (("b", "0"), ("1", "2"), None),
        "R5": (("b", "c$d"), ("1", "2"), None),
    },
    "crlf_oddcase.cir": {
        "vin": (("in", "0"), ("p", "n"), None),
        "DZ1": (("0", "mid"), ("a", "k"), "dz"),
    },
    "semiconductors.cir": {
        "Q1": (("c1", "b1", "0"), ("c", "b", "e"), "qgen"),
        "Q2": (("c2", "c1", "e2", "sub"), ("c", "b", "e", "s"), "qgen"),
        "W1": (("w_out", "0"), ("p", "n"), "wgen"),
        "S1": (("sw_out", "0", "c1", "0"), ("p", "n", "cp", "cn"), "sgen"),
    },
    "controlled.cir": {
        "E1": (("e1", "0", "in", "0"), ("p", "n", "cp", "cn"), None),
        "Evol": (("evol", "0"), ("p", "n"), None),
        "Epoly": (("epoly", "0", "in", "0", "in2", "0"),
                  ("p", "n", "cp1", "cn1", "cp2", "cn2"), None),
        "Fpoly": (("fpoly", "0"), ("p", "n"), None),
    },
    "xspice.cir": {
        "Alim": (("in", "ref", "lim"), ("1", "2", "3"), "limiter"),
        "Ainv": (("dig", "dinv"), ("1", "2"), "inv"),
    },
    "lines_coupled.cir": {
        "Pcpl": (("src", "0", "d", "0"), ("1", "2", "3", "4"), "cplmod"),
        "Urc": (("src", "e", "0"), ("1", "2", "3"), "urcmod"),
        "Kxfmr": ((), (), None),
    },
    "after_end.cir": {"Rload": (("out", "0"), ("1", "2"), None)},
    "buck.cir": {
        "M1": (("vin", "g1", "sw"), ("d", "g", "s"), "mhs"),
        "M2": (("sw", "g2", "0"), ("d", "g", "s"), "mls"),
        "VDRV1": (("drv1", "sw"), ("p", "n"), None),
        "IL1": (("sw", "out"), ("p", "n"), None),
        "RLOAD": (("out", "0"), ("1", "2"), None),
    },
}


@pytest.mark.parametrize("fixture", sorted(HAND_EXPECTED))
def test_hand_written_expectations(fixture: str) -> None:
    path = DEMO / fixture if fixture == "buck.cir" else FIXTURES / fixture
    net = read_netlist(path)
    for name, (nodes, terminals, model) in HAND_EXPECTED[fixture].items():
        el = net.element(name)
        assert (el.nodes, el.terminal_names, el.model) == (nodes, terminals, model), name


def test_buck_demo_has_exactly_the_agreed_elements() -> None:
    """The routes file of the demo is written against these names and nodes."""
    net = read_netlist(DEMO / "buck.cir")
    got = {el.name: el.nodes for el in net.elements}
    assert got == {
        "VIN": ("vin", "0"), "CIN1": ("vin", "0"), "CIN2": ("vin", "0"),
        "M1": ("vin", "g1", "sw"), "M2": ("sw", "g2", "0"),
        "VDRV1": ("drv1", "sw"), "RG1": ("drv1", "g1"),
        "VDRV2": ("drv2", "0"), "RG2": ("drv2", "g2"),
        "IL1": ("sw", "out"), "COUT": ("out", "0"), "RLOAD": ("out", "0"),
    }
    assert net.models["mhs"].type == "vdmos" and net.models["mls"].type == "vdmos"


@needs_ngspice
@pytest.mark.ngspice
def test_buck_demo_switches_as_described(tmp_path: Path) -> None:
    """The demo's header promises 48 V in, about 12 V out, a 2 us period with
    duty about 0.25 and clean ns edges: check the waveform ngspice gives.
    Expected values from the buck converter's ideal relation Vout = D * Vin
    (e.g. R. W. Erickson, D. Maksimovic, Fundamentals of Power Electronics,
    2nd ed., 2001, section 2.2); tolerances cover dead time and losses."""
    import numpy as np

    run = run_deck((DEMO / "buck.cir").read_bytes(), DEMO, tmp_path)
    assert run.returncode == 0 and run.failures() == []
    (plot,) = run.plots
    t, sw, out = plot["time"], plot["v(sw)"], plot["v(out)"]
    assert t[-1] == pytest.approx(3e-6)
    assert np.max(sw) < 50.0 and np.min(sw) > -2.0  # ideal wires: no big ringing
    late = t > 1.0e-6
    high = np.mean(sw[late] > 24.0)
    assert high == pytest.approx(0.25, abs=0.03)
    assert np.mean(out[late]) == pytest.approx(12.0, abs=0.3)
    # one rising edge of the switch node, 10 % to 90 % of 48 V
    win = (t > 2.0e-6) & (t < 2.1e-6)
    tw, sww = t[win], sw[win]
    rise = tw[np.argmax(sww > 43.2)] - tw[np.argmax(sww > 4.8)]
    assert 0.5e-9 < rise < 20e-9
