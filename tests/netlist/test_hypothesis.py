"""Generated netlists and mutated fixtures.

* Random element mixes with random spacing, case, comments, continuation lines
  and line ends round-trip byte for byte, and the reader finds the nodes the
  generator wrote (the generator's own record is the reference).
* Random resistor networks: the operating point that ngspice computes equals a
  nodal analysis (numpy) built from the reader's nodes -- ngspice is the
  outside reference that the generated text means what the reader says.
* Random byte mutations of the fixtures either read or raise NetlistError;
  nothing else escapes.
* Letters whose meaning depends on the dialect are generated in each of their
  forms: ``U`` as a URC line and as a PSpice-style digital primitive (only in
  netlists written for ngspice's PSpice mode, where ``$`` starts no comment),
  ``E``/``G`` with VALUE, TABLE and LAPLACE (PSpice's form; ngspice 39 refuses
  LAPLACE, checked with ngspice -b, but its two nodes read the same), ``W``
  switches, ``A`` XSPICE instances with ``[ ]`` vectors; ``U`` cards of
  unknown form pass through.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from parasite.errors import NetlistError
from parasite.netlist import Netlist, canonical_node, parse_netlist

from .test_netlist_support import FIXTURES, needs_ngspice, run_deck

# Words that mean something at a node's place in some card (E/G keywords,
# model and subcircuit names used below): kept out of generated node names.
RESERVED = {"vol", "cur", "value", "table", "laplace", "freq", "poly", "dmod", "qmod", "nmod",
            "vmod", "smod", "subx", "dc", "params", "urcm", "wmod", "amod", "tdly", "iom",
            "null"}

node_name = st.one_of(
    st.sampled_from(["0", "gnd", "GND", "Gnd"]),
    st.from_regex(r"[a-zA-Z][a-zA-Z0-9_]{0,5}", fullmatch=True).filter(
        lambda s: s.lower() not in RESERVED and s.lower() != "gnd"
    ),
)


def _case(draw: st.DrawFn, text: str) -> str:
    return "".join(c.upper() if draw(st.booleans()) else c.lower() for c in text)


# letter -> (node count, fields after the nodes); the reader must find exactly
# the node count given here (forms from the ngspice 39 manual).
FORMS: dict[str, list[tuple[int, list[str]]]] = {
    "R": [(2, ["1k"]), (2, ["r=2k", "tc1=0.01"])],
    "C": [(2, ["1n", "ic=0"])],
    "L": [(2, ["1u"])],
    "V": [(2, ["DC", "1"]), (2, ["PULSE(0", "1", "0", "1n", "1n", "5n", "10n)"])],
    "I": [(2, ["DC", "1m"])],
    "D": [(2, ["DMOD"]), (3, ["DMOD", "thermal"])],
    "Q": [(3, ["QMOD"]), (4, ["QMOD", "area=2"])],
    "M": [(4, ["NMOD", "l=1u", "w=2u"]), (3, ["VMOD"])],
    "E": [(4, ["2"]), (2, ["vol='v(x)*2'"])],
    "G": [(4, ["1m"]), (2, ["cur", "=", "{v(x)/1k}"])],
    "F": [(2, ["Vctl", "2"])],
    "H": [(2, ["Vctl", "50"])],
    "S": [(4, ["SMOD"])],
    "T": [(4, ["Z0=50", "TD=1n"])],
    "X": [(2, ["SUBX"]), (2, ["SUBX", "k=2"])],
    "B": [(2, ["V", "=", "{v(x)*2}"])],
    "K": [(0, ["Lk1", "Lk2", "0.5"])],
    # letters whose form tells their meaning
    "U": [(3, ["URCM", "l=1m"]), (3, ["URCM", "l=10u", "n=4"])],
    "W": [(2, ["Vctl", "WMOD"])],
}
FORMS["E"] += [(2, ["VALUE", "=", "{v(x)*2}"]), (2, ["TABLE", "{v(x)}", "=", "(0,0)", "(1,2)"])]
FORMS["G"] += [(2, ["LAPLACE", "{v(x)}", "=", "{1/(1+s)}"]), (2, ["VALUE", "{v(x)/1k}"])]

# Forms with fields before their nodes: letter -> (fields before, node count,
# fields after). "A": XSPICE (ngspice 39 manual, chapter 12: a vector of
# nodes in brackets). "U" digital: PSpice-style primitives (type(params)
# dpwr dgnd pins tmodel iomodel; pins: BUF 2, AND(2) 3, NOR(3) 4, BUF3 3
# (in, enable, out), DFF(1) 6 (preb clrb clk d q qb)), the first two nodes
# digital power and ground; generated only in PSpice-mode netlists.
PREFIXED: dict[str, list[tuple[list[str], int, list[str]]]] = {
    "A": [(["["], 2, ["]", "AMOD"]), ([], 2, ["AMOD"])],
}
DIGITAL = [(["BUF"], 4, ["TDLY", "IOM"]), (["INV"], 4, ["TDLY", "IOM"]),
           (["AND(2)"], 5, ["TDLY", "IOM"]), (["NOR(3)"], 6, ["TDLY", "IOM", "MNTYMXDLY=0"]),
           (["BUF3"], 5, ["TDLY", "IOM"]), (["DFF(1)"], 8, ["TDLY", "IOM", "IO_LEVEL=1"])]
power_node = st.sampled_from(["$G_DPWR", "$G_DGND", "$g_dpwr", "DPWR"])
# U cards of forms the reader does not know: passed through, no nodes
OPAQUE_U = ["LOGICEXP(2,1) $G_DPWR $G_DGND a b y D0 IO", "AND(2) $G_DPWR $G_DGND a y TDLY IOM",
            "weird"]

MODELS = [".model DMOD D", ".model QMOD NPN", ".model NMOD NMOS level=1",
          ".model VMOD VDMOS", ".model SMOD SW", ".model URCM URC", ".model WMOD CSW",
          ".model AMOD d_and"]
SUBCKT = [".subckt SUBX p q params: k=1", "Rin p q {k}", ".ends SUBX"]

comment_bytes = st.binary(max_size=12).map(lambda b: b.replace(b"\n", b"").replace(b"\r", b""))
blank = st.sampled_from([" ", "  ", "\t", " \t"])


@dataclass
class Truth:
    names: list[str] = field(default_factory=list)
    nodes: list[tuple[str, ...]] = field(default_factory=list)
    tokens: list[list[str]] = field(default_factory=list)  # node fields as written


@st.composite
def netlists(draw: st.DrawFn) -> tuple[bytes, Truth]:
    eol = draw(st.sampled_from([b"\n", b"\r\n"]))
    truth = Truth()
    lines: list[bytes] = [b"gen" + draw(comment_bytes).replace(b"+", b"")]
    # written for ngspice's PSpice mode: digital primitives, no '$' comments
    pspice = draw(st.booleans())
    forms = sorted(FORMS) + sorted(PREFIXED) + (["digital", "opaque"] if pspice else [])

    def comment_line() -> bytes:
        lead = draw(st.sampled_from([b"*", b" *", b";", b"$"]))
        return lead + draw(comment_bytes)

    def inline_comment() -> bytes:
        marks = [b" ;", b" //", b";"] + ([] if pspice else [b" $", b"\t$"])
        return draw(st.sampled_from(marks)) + draw(comment_bytes)

    count = draw(st.integers(1, 12))
    used: set[str] = set()
    for _ in range(count):
        kind = draw(st.sampled_from(forms))
        before: list[str] = []
        opaque = None
        if kind in FORMS:
            letter = kind
            n, rest = draw(st.sampled_from(FORMS[kind]))
        elif kind in PREFIXED:
            letter = kind
            before, n, rest = draw(st.sampled_from(PREFIXED[kind]))
        elif kind == "digital":
            letter = "U"
            before, n, rest = draw(st.sampled_from(DIGITAL))
        else:
            letter, n, rest = "U", 0, []
            opaque = draw(st.sampled_from(OPAQUE_U)).split()
        suffix = draw(st.from_regex(r"[a-z0-9_]{1,4}", fullmatch=True))
        name = _case(draw, letter + suffix)
        if name.lower() in used or name.lower() in {"lk1", "lk2", "vctl"}:
            continue
        used.add(name.lower())
        node_fields = [draw(power_node if kind == "digital" and i < 2 else node_name)
                       for i in range(n)]
        rest = [_case(draw, f) if f[0].isalpha() and "=" not in f and "(" not in f else f
                for f in rest]
        before = [_case(draw, f) for f in before]
        fields = [name, *before, *node_fields, *rest] if opaque is None else [name, *opaque]
        # split into physical lines: "+" continuations, or a trailing "\\"
        cuts = sorted(draw(st.sets(st.integers(1, len(fields) - 1), max_size=3))) \
            if len(fields) > 1 else []
        pieces = [fields[a:b] for a, b in zip([0, *cuts], [*cuts, len(fields)], strict=True)]
        if any(p and p[0] in ("=", "]") for p in pieces[1:]):
            pieces = [fields]
        lead = draw(st.sampled_from(["", " ", "\t"]))
        for k, piece in enumerate(pieces):
            text = draw(blank).join(piece)
            if k == 0:
                line = (lead + text).encode()
            else:
                glue = draw(st.booleans()) and not lines[-1].endswith(b"\\\\")
                if glue and lines[-1] == (lines[-1].split(b";")[0]):
                    lines[-1] = lines[-1] + b" \\\\"
                    line = text.encode()
                else:
                    while draw(st.integers(0, 3)) == 0:
                        lines.append(comment_line() if draw(st.booleans()) else b"")
                    line = (draw(st.sampled_from(["+", "+ ", " +\t", "+\t"])) + text).encode()
            if k == len(pieces) - 1 and draw(st.booleans()):
                line += inline_comment()
            lines.append(line)
        if draw(st.integers(0, 4)) == 0:
            lines.append(comment_line())
        truth.names.append(name)
        truth.nodes.append(tuple(canonical_node(f) for f in node_fields))
        truth.tokens.append(node_fields)
    lines += [m.encode() for m in MODELS] + [s.encode() for s in SUBCKT]
    if draw(st.booleans()):
        lines += [b".control", b"R99 not an element", b"run", b".endc"]
    lines.append(draw(st.sampled_from([b".end", b".END", b".End"])))
    data = eol.join(lines) + (eol if draw(st.booleans()) else b"")
    return data, truth


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(netlists())
def test_generated_netlists_round_trip_with_the_written_nodes(case: tuple[bytes, Truth]) -> None:
    data, truth = case
    net = parse_netlist(data, "gen.cir", Path("."))
    assert net.to_bytes() == data
    got = [(el.name, el.nodes) for el in net.elements]
    assert got == list(zip(truth.names, truth.nodes, strict=True))
    assert net.element_names() == {n.lower() for n in truth.names} | {"rin"}


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(netlists(), st.data())
def test_generated_renames_change_only_that_field(
    case: tuple[bytes, Truth], data: st.DataObject
) -> None:
    raw, truth = case
    choices = [(i, k) for i, nodes in enumerate(truth.nodes) for k in range(len(nodes))]
    if not choices:
        return
    i, k = data.draw(st.sampled_from(choices))
    net = parse_netlist(raw, "gen.cir", Path("."))
    net.rename_terminal(truth.names[i], str(k + 1), "hz_new")
    out = net.to_bytes()
    old = truth.tokens[i][k].encode()
    start = 0
    while raw[start] == out[start]:
        start += 1
    # the result is the input with one field, as the generator wrote it, replaced
    assert any(
        out == raw[:s] + b"hz_new" + raw[s + len(old) :] and raw[s : s + len(old)] == old
        for s in range(max(0, start - len(b"hz_new")), start + 1)
    )
    again = parse_netlist(out, "gen.cir", Path("."))
    expected = list(truth.nodes[i])
    expected[k] = "hz_new"
    assert again.element(truth.names[i]).nodes == tuple(expected)


# -- resistor networks against ngspice ------------------------------------------------------


@st.composite
def resistor_networks(draw: st.DrawFn) -> tuple[bytes, dict[str, float], list[str]]:
    k = draw(st.integers(2, 6))
    nodes = [f"n{i}" for i in range(k)]
    values: dict[str, float] = {}
    lines = ["random resistor network"]
    written: list[str] = []
    count = 0

    def spelled(node: str) -> str:
        return _case(draw, node)

    for node in nodes:  # every node has a path to ground
        count += 1
        r = draw(st.integers(1, 100)) * 100.0
        name = f"R{count}"
        values[name] = r
        fields = [name, spelled(node), draw(st.sampled_from(["0", "gnd", "GND"])), f"{r:g}"]
        written.append(name)
        lines.append(_fmt(draw, fields))
    for _ in range(draw(st.integers(0, 6))):
        a, b = draw(st.sampled_from(nodes)), draw(st.sampled_from(nodes))
        if a == b:
            continue
        count += 1
        r = draw(st.integers(1, 100)) * 10.0
        name = f"R{count}"
        values[name] = r
        written.append(name)
        lines.append(_fmt(draw, [name, spelled(a), spelled(b), f"{r:g}"]))
    driven = draw(st.sets(st.sampled_from(nodes), min_size=1, max_size=2))
    for i, node in enumerate(sorted(driven)):
        v = float(draw(st.integers(-20, 20)))
        name = f"V{i}"
        values[name] = v
        written.append(name)
        lines.append(_fmt(draw, [name, spelled(node), "0", "DC", f"{v:g}"]))
    for i in range(draw(st.integers(0, 2))):
        a = draw(st.sampled_from(nodes))
        c = float(draw(st.integers(-10, 10))) * 1e-3
        name = f"I{i}"
        values[name] = c
        written.append(name)
        lines.append(_fmt(draw, ["I" + str(i), "0", spelled(a), f"{c:g}"]))
    lines += [".op", ".end"]
    return ("\n".join(lines) + "\n").encode(), values, written


def _fmt(draw: st.DrawFn, fields: list[str]) -> str:
    """Fields on one line or split with '+' continuations and comments."""
    out = fields[0]
    for f in fields[1:]:
        if draw(st.integers(0, 3)) == 0:
            out += draw(st.sampled_from(
                ["\n+ ", "\n* note\n+", "\n\n  +\t", " \\\\\n", "\\\\\n\n\t"]
            )) + f
        else:
            out += draw(blank) + f
    if draw(st.booleans()):
        out += draw(st.sampled_from([" ; c", " $ c 1k", " // x"]))
    return out


def nodal_analysis(net: Netlist, values: dict[str, float]) -> dict[str, float]:
    """Modified nodal analysis (resistors, independent V and I sources) from the
    reader's nodes; SPICE conventions: I flows from n+ through the source to n-."""
    elements = net.elements
    names = sorted({n for el in elements for n in el.nodes} - {"0"})
    index = {n: i for i, n in enumerate(names)}
    vsrc = [el for el in elements if el.letter == "V"]
    size = len(names) + len(vsrc)
    a = np.zeros((size, size))
    z = np.zeros(size)

    def stamp(n: str, m: str, g: float) -> None:
        for p, q, s in ((n, n, g), (m, m, g), (n, m, -g), (m, n, -g)):
            if p != "0" and q != "0":
                a[index[p], index[q]] += s

    for el in elements:
        p, n = el.nodes
        if el.letter == "R":
            stamp(p, n, 1.0 / values[el.name])
        elif el.letter == "I":
            if p != "0":
                z[index[p]] -= values[el.name]
            if n != "0":
                z[index[n]] += values[el.name]
    for k, el in enumerate(vsrc):
        row = len(names) + k
        p, n = el.nodes
        if p != "0":
            a[index[p], row] += 1
            a[row, index[p]] += 1
        if n != "0":
            a[index[n], row] -= 1
            a[row, index[n]] -= 1
        z[row] = values[el.name]
    x = np.linalg.solve(a, z)
    return {n: float(x[i]) for n, i in index.items()}


@needs_ngspice
@pytest.mark.ngspice
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                 HealthCheck.function_scoped_fixture])
@given(case=resistor_networks())
def test_ngspice_operating_point_matches_nodal_analysis_of_the_read_netlist(
    case: tuple[bytes, dict[str, float], list[str]], tmp_path: Path
) -> None:
    deck, values, written = case
    net = parse_netlist(deck, "net.cir", tmp_path)
    assert [el.name for el in net.elements] == written
    expected = nodal_analysis(net, values)
    run = run_deck(deck, tmp_path, tmp_path)
    assert run.returncode == 0 and run.failures() == []
    (plot,) = run.plots
    for node, v in expected.items():
        assert float(plot[f"v({node})"][0]) == pytest.approx(v, rel=1e-9, abs=1e-9), node


# -- mutations of the fixtures ---------------------------------------------------------------

FIXTURE_FILES = sorted(FIXTURES.glob("*.cir")) + sorted((FIXTURES / "pspice").glob("*.cir"))
FIXTURE_BYTES = {p: p.read_bytes() for p in FIXTURE_FILES}

mutation = st.one_of(
    st.tuples(st.just("set"), st.integers(0, 10**6), st.integers(0, 255)),
    st.tuples(st.just("insert"), st.integers(0, 10**6),
              st.sampled_from([b"+", b"\n", b"\r\n", b"*", b";", b"$", b" ", b"{", b"}", b"'",
                               b".ends", b".subckt x a", b"=", b"(", b",", b"\\\\", b"\xff",
                               b"\x00", b".include x", b"X1 a b", b"R1", b".end\n",
                               b".control\n", b".lib x y\n"])),
    st.tuples(st.just("delete"), st.integers(0, 10**6), st.integers(1, 40)),
    st.tuples(st.just("dupline"), st.integers(0, 10**6), st.just(0)),
)


def mutate(data: bytes, ops: list[tuple[str, int, object]]) -> bytes:
    buf = bytearray(data)
    for kind, pos, arg in ops:
        if not buf:
            break
        at = pos % len(buf)
        if kind == "set":
            assert isinstance(arg, int)
            buf[at] = arg
        elif kind == "insert":
            assert isinstance(arg, bytes)
            buf[at:at] = arg
        elif kind == "delete":
            assert isinstance(arg, int)
            del buf[at : at + arg]
        else:
            start = buf.rfind(b"\n", 0, at) + 1
            end = buf.find(b"\n", at)
            end = len(buf) if end < 0 else end + 1
            buf[start:start] = buf[start:end]
    return bytes(buf)


def exercise(net: Netlist) -> None:
    """Use every part of the API; only NetlistError may come out."""
    net.node_names()
    names = net.element_names()
    _ = net.models, net.subckts, net.title, net.warnings
    try:
        elements = net.elements
    except NetlistError:
        elements = []
    for el in elements[:8]:
        for pos in range(len(el.nodes)):
            net.terminal_node(el.name, str(pos + 1))
        for term in el.terminal_names:
            net.terminal_index(el.name, term)
    for name in sorted(names)[:3]:
        try:
            net.rename_terminal(name, "1", "mut_node")
        except NetlistError:
            pass
    try:
        net.append_cards(["Rmut_added mut_a 0 1"])
    except NetlistError:
        pass
    net.to_bytes()


@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(FIXTURE_FILES), st.lists(mutation, min_size=1, max_size=4))
def test_mutated_fixtures_read_or_raise_netlist_error(path: Path, ops: list) -> None:  # type: ignore[type-arg]
    data = mutate(FIXTURE_BYTES[path], ops)
    try:
        net = parse_netlist(data, path.name, path.parent)
    except NetlistError as exc:
        assert str(exc).startswith(path.name) or ":" in str(exc)
        return
    assert net.to_bytes() == data
    exercise(net)
