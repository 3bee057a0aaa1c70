"""The one table of element kinds, and the rules that find an element's nodes.

Every letter that ngspice 39 reads as an element has a row: what it is, its
terminal names in card order (the routes-file spec's table, extended to the
letters that table does not list), how many nodes it has, and the rule that
finds them. Forms and node counts are those of the ngspice 39 manual
(chapters 3-13: general forms of each element); where the count depends on
the model (a bipolar transistor's optional substrate node, a VDMOS power MOSFET
with three nodes, a diode's thermal node) the rule is the one ngspice's own
parser follows: the nodes are the fields before the first field that names a
model, within the kind's range.

A letter whose meaning depends on the dialect is told apart by the card's
form: ``U`` is a URC line, or a PSpice-style digital primitive as ngspice's
PSpice compatibility mode reads it (``parasite.netlist.digital``). A ``U``
card of neither known form gets an opaque layout (:attr:`Layout.opaque`): no
nodes, the card passed through untouched, and a pin on it is an error.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Literal

from parasite.netlist.digital import layout as digital_layout
from parasite.netlist.digital import primitive, timing_model
from parasite.netlist.lines import ascii_lower
from parasite.netlist.tokens import Token

NodeRule = Literal["fixed", "controlled", "model", "subckt", "xspice", "none", "u"]


@dataclass(frozen=True)
class ElementKind:
    """One row of the table.

    ``terminals`` are the names of the nodes in card order for the longest form
    of the card (a card with fewer nodes uses the first names); an empty tuple
    means the names are the 1-based positions. ``aliases`` are other accepted
    names. ``model_field`` is where a fixed-node card's model name sits, counted
    in fields after the nodes (``None``: no model, or an optional one).
    """

    letter: str
    description: str
    form: str  # general form, as in the ngspice 39 manual
    terminals: tuple[str, ...]
    min_nodes: int
    max_nodes: int | None
    rule: NodeRule
    model_field: int | None = None
    aliases: Mapping[str, str] = field(default_factory=dict)


_TWO = {"p": "1", "n": "2"}

ELEMENT_KINDS: dict[str, ElementKind] = {
    k.letter: k
    for k in (
        ElementKind("A", "XSPICE code model", "AXXX <connections> mname", (), 0, None, "xspice"),
        ElementKind("B", "behavioral source", "BXXX n+ n- v=expr|i=expr", ("1", "2"), 2, 2,
                    "fixed", aliases=_TWO),
        ElementKind("C", "capacitor", "CXXX n+ n- <value> <mname>", ("1", "2"), 2, 2, "fixed",
                    aliases=_TWO),
        ElementKind("D", "diode", "DXXX n+ n- <tj> mname", ("a", "k", "tj"), 2, 3, "model"),
        ElementKind("E", "voltage-controlled voltage source",
                    "EXXX n+ n- nc+ nc- value | n+ n- vol=expr | n+ n- poly(nd) nc1+ nc1- ...",
                    ("p", "n", "cp", "cn"), 2, None, "controlled"),
        ElementKind("F", "current-controlled current source", "FXXX n+ n- vnam value",
                    ("p", "n"), 2, 2, "fixed"),
        ElementKind("G", "voltage-controlled current source",
                    "GXXX n+ n- nc+ nc- value | n+ n- cur=expr | n+ n- poly(nd) nc1+ nc1- ...",
                    ("p", "n", "cp", "cn"), 2, None, "controlled"),
        ElementKind("H", "current-controlled voltage source", "HXXX n+ n- vnam value",
                    ("p", "n"), 2, 2, "fixed"),
        ElementKind("I", "current source", "IXXX n+ n- <value>", ("p", "n"), 2, 2, "fixed"),
        ElementKind("J", "JFET", "JXXX nd ng ns mname", ("d", "g", "s"), 3, 3, "fixed", 0),
        ElementKind("K", "inductor coupling", "KXXX LYYY LZZZ value", (), 0, 0, "none"),
        ElementKind("L", "inductor", "LXXX n+ n- <value> <mname>", ("1", "2"), 2, 2, "fixed",
                    aliases=_TWO),
        ElementKind("M", "MOSFET", "MXXX nd ng ns <nb> mname (VDMOS: nd ng ns <tj tc> mname)",
                    ("d", "g", "s", "b"), 3, 7, "model"),
        ElementKind("N", "OSDI (Verilog-A) device", "NXXX n1 n2 ... mname", (), 1, None, "model"),
        ElementKind("O", "lossy transmission line", "OXXX n1 n2 n3 n4 mname",
                    ("p1", "n1", "p2", "n2"), 4, 4, "fixed", 0),
        ElementKind("P", "coupled multiconductor line", "PXXX ni1 ... gnd1 no1 ... gnd2 mname",
                    (), 4, 18, "model"),
        ElementKind("Q", "bipolar transistor", "QXXX nc nb ne <ns> <tj> mname",
                    ("c", "b", "e", "s", "tj"), 3, 5, "model"),
        ElementKind("R", "resistor", "RXXX n+ n- <value> <mname>", ("1", "2"), 2, 2, "fixed",
                    aliases=_TWO),
        ElementKind("S", "voltage-controlled switch", "SXXX n+ n- nc+ nc- mname",
                    ("p", "n", "cp", "cn"), 4, 4, "fixed", 0),
        ElementKind("T", "lossless transmission line", "TXXX n1 n2 n3 n4 z0=value td=value",
                    ("p1", "n1", "p2", "n2"), 4, 4, "fixed"),
        ElementKind("U", "uniform distributed RC line, or a PSpice-style digital primitive",
                    "UXXX n1 n2 n3 mname l=len | UXXX type(params) dpwr dgnd nodes... "
                    "tmodel iomodel", ("1", "2", "3"), 3, None, "u", 0),
        ElementKind("V", "voltage source", "VXXX n+ n- <value>", ("p", "n"), 2, 2, "fixed"),
        ElementKind("W", "current-controlled switch", "WXXX n+ n- vnam mname", ("p", "n"), 2, 2,
                    "fixed", 1),
        ElementKind("X", "subcircuit instance", "XXXX n1 n2 ... subnam <params>", (), 0, None,
                    "subckt"),
        ElementKind("Y", "single lossy transmission line (TXL)", "YXXX n1 0 n2 0 mname",
                    ("p1", "n1", "p2", "n2"), 4, 4, "fixed", 0),
        ElementKind("Z", "MESFET", "ZXXX nd ng ns mname", ("d", "g", "s"), 3, 3, "fixed", 0),
    )
}

# Extra names of a MOSFET's fifth to seventh node (SOI models) and of a VDMOS's
# thermal nodes (ngspice 39 manual, 11.3: "MXXX nd ng ns tj tc mname thermal").
_MOS_NAMES = ("d", "g", "s", "b", "5", "6", "7")
_VDMOS_NAMES = ("d", "g", "s", "tj", "tc")
# E/G keywords after the output nodes that make the card behavioural (2 nodes).
_BEHAVIOURAL = frozenset({"vol", "cur", "value", "table", "laplace", "freq"})


class LayoutError(Exception):
    """The fields of a card do not give its nodes; the message says why."""


@dataclass(frozen=True)
class ModelInfo:
    name: str
    type: str


@dataclass(frozen=True)
class Layout:
    """Where an element's nodes are: spans ``(start, end)`` in the card's joined
    text, their terminal names, other accepted names, and the model or subcircuit."""

    spans: tuple[tuple[int, int], ...]
    terminal_names: tuple[str, ...]
    aliases: Mapping[str, int]
    model: str | None = None
    subckt: str | None = None
    opaque: str | None = None  # why the nodes of a card of unknown form are not told


class Lookup:
    """What a rule may ask about the card's surroundings (models and subcircuits
    visible from the card's scope). ``None`` results mean "not defined"."""

    def __init__(
        self,
        model: Callable[[str], ModelInfo | None],
        subckt_ports: Callable[[str], tuple[str, ...] | None],
    ) -> None:
        self.model = model
        self.subckt_ports = subckt_ports


def _plain(tokens: list[Token], i: int) -> bool:
    """Field ``i`` can be a node or a name: not ``=``, not the key of ``key=value``,
    not an expression or a string."""
    if i >= len(tokens):
        return False
    t = tokens[i].text
    if t == "=" or t[0] in "{'\"":
        return False
    return not (i + 1 < len(tokens) and tokens[i + 1].text == "=")


def _positional(n: int) -> tuple[str, ...]:
    return tuple(str(i + 1) for i in range(n))


def _aliases(kind: ElementKind, names: tuple[str, ...]) -> dict[str, int]:
    out: dict[str, int] = {}
    for alias, target in kind.aliases.items():
        if target in names:
            out[alias] = names.index(target)
    return out


def _missing(name: str, kind: ElementKind, need: str, found: int) -> LayoutError:
    return LayoutError(
        f"{name}: a {kind.description} needs {need}, found {found} field(s) that can be "
        f"nodes (form: {kind.form})"
    )


def _count_plain(tokens: list[Token], start: int) -> int:
    i = start
    while _plain(tokens, i):
        i += 1
    return i - start


def layout(tokens: list[Token], lookup: Lookup | None) -> Layout | None:
    """Find the nodes of an element card from its fields (``tokens[0]`` is the
    element's name; for ``A`` cards the fields must be split with brackets).

    With ``lookup`` None only what the fields alone tell is checked (missing
    nodes), and None is returned where the answer needs a model or subcircuit.
    Raises :class:`LayoutError`.
    """
    name = tokens[0].text
    kind = ELEMENT_KINDS[name[0].upper()]
    handler = _RULES[kind.rule]
    return handler(kind, name, tokens, lookup)


def _fixed(kind: ElementKind, name: str, tokens: list[Token], lookup: Lookup | None) -> Layout:
    n = kind.min_nodes
    plain = _count_plain(tokens, 1)
    if plain < n:
        raise _missing(name, kind, f"{n} nodes ({', '.join(kind.terminals)})", plain)
    model: str | None = None
    if kind.model_field is not None:
        i = 1 + n + kind.model_field
        if not _plain(tokens, i):
            raise LayoutError(
                f"{name}: a {kind.description} needs a model name after its nodes "
                f"(form: {kind.form})"
            )
        model = ascii_lower(tokens[i].text)
    elif kind.aliases and lookup is not None:  # R, C, L, B: an optional model
        for i in range(1 + n, len(tokens)):
            if _plain(tokens, i) and lookup.model(tokens[i].text) is not None:
                model = ascii_lower(tokens[i].text)
                break
    names = kind.terminals[:n]
    spans = tuple((t.start, t.end) for t in tokens[1 : 1 + n])
    return Layout(spans, names, _aliases(kind, names), model)


def _controlled(
    kind: ElementKind, name: str, tokens: list[Token], lookup: Lookup | None
) -> Layout:
    plain = _count_plain(tokens, 1)
    if plain < 2:
        raise _missing(name, kind, "2 output nodes (p, n)", plain)
    word = ascii_lower(tokens[3].text) if len(tokens) > 3 else ""
    names: tuple[str, ...]
    if word in _BEHAVIOURAL:
        n, names = 2, ("p", "n")
        aliases: dict[str, int] = {}
    elif word == "poly":
        if len(tokens) < 5 or not tokens[4].text.isdecimal() or int(tokens[4].text) < 1:
            raise LayoutError(f"{name}: POLY needs its dimension as a positive integer, "
                              f"as in POLY(2) (form: {kind.form})")
        dims = int(tokens[4].text)
        have = _count_plain(tokens, 5)
        if have < 2 * dims:
            raise LayoutError(f"{name}: POLY({dims}) needs {2 * dims} controlling nodes, "
                              f"found {have} (form: {kind.form})")
        n = 2 + 2 * dims
        ctrl = [f"{p}{k}" for k in range(1, dims + 1) for p in ("cp", "cn")]
        names = ("p", "n", *ctrl)
        aliases = {"cp": 2, "cn": 3}
        spans = tuple((t.start, t.end) for t in tokens[1:3]) + tuple(
            (t.start, t.end) for t in tokens[5 : 5 + 2 * dims]
        )
        return Layout(spans, names, aliases)
    else:
        if plain < 4:
            raise _missing(name, kind, "4 nodes (p, n, cp, cn)", plain)
        n, names, aliases = 4, kind.terminals, {}
    return Layout(tuple((t.start, t.end) for t in tokens[1 : 1 + n]), names, aliases)


def _by_model(
    kind: ElementKind, name: str, tokens: list[Token], lookup: Lookup | None
) -> Layout | None:
    plain = _count_plain(tokens, 1)
    if plain < kind.min_nodes + 1:
        raise _missing(name, kind, f"at least {kind.min_nodes} nodes and a model name", plain)
    if lookup is None:
        return None
    top = plain - 1 if kind.max_nodes is None else min(plain - 1, kind.max_nodes)
    for n in range(kind.min_nodes, top + 1):
        model = lookup.model(tokens[1 + n].text)
        if model is None:
            continue
        if kind.letter == "M":
            if model.type == "vdmos":
                names: tuple[str, ...] = _VDMOS_NAMES[:n]
            elif n == 3:
                raise LayoutError(
                    f"{name}: a MOSFET with 3 nodes needs a VDMOS model, but model "
                    f"{model.name!r} is of type {model.type!r} (form: {kind.form})"
                )
            else:
                names = _MOS_NAMES[:n]
        elif kind.terminals:
            names = kind.terminals[:n]
        else:
            names = _positional(n)
        spans = tuple((t.start, t.end) for t in tokens[1 : 1 + n])
        return Layout(spans, names, {}, ascii_lower(tokens[1 + n].text))
    candidates = ", ".join(repr(t.text) for t in tokens[1 + kind.min_nodes : 2 + top])
    raise LayoutError(
        f"{name}: cannot tell how many nodes this {kind.description} has: none of the "
        f"fields {candidates} names a model defined in the netlist or its includes "
        f"(form: {kind.form})"
    )


def _subckt(
    kind: ElementKind, name: str, tokens: list[Token], lookup: Lookup | None
) -> Layout | None:
    end = len(tokens)
    for j in range(1, len(tokens)):
        if ascii_lower(tokens[j].text).startswith("params:") or (
            j + 1 < len(tokens) and tokens[j + 1].text == "="
        ):
            end = j
            break
    sub_index = end - 1
    if sub_index < 1 or not _plain(tokens, sub_index):
        raise LayoutError(f"{name}: a subcircuit instance needs the subcircuit's name "
                          f"(form: {kind.form})")
    for j in range(1, sub_index):
        if not _plain(tokens, j):
            raise LayoutError(f"{name}: field {tokens[j].text!r} cannot be a node "
                              f"(form: {kind.form})")
    sub = ascii_lower(tokens[sub_index].text)
    spans = tuple((t.start, t.end) for t in tokens[1:sub_index])
    if lookup is None:
        return None
    ports = lookup.subckt_ports(sub)
    if ports is None:
        raise LayoutError(f"{name}: subcircuit {tokens[sub_index].text!r} is not defined "
                          f"in the netlist or its includes")
    if len(ports) != len(spans):
        raise LayoutError(
            f"{name}: {len(spans)} node(s) given, but subcircuit {tokens[sub_index].text!r} "
            f"has {len(ports)} port(s) ({', '.join(ports) or 'none'})"
        )
    return Layout(spans, ports, {}, None, sub)


def _xspice(kind: ElementKind, name: str, tokens: list[Token], lookup: Lookup | None) -> Layout:
    if len(tokens) < 2 or not _plain(tokens, len(tokens) - 1) or tokens[-1].text in "[]":
        raise LayoutError(f"{name}: an XSPICE instance needs a model name at the end "
                          f"(form: {kind.form})")
    spans: list[tuple[int, int]] = []
    skip_next = False
    for t in tokens[1:-1]:
        low = ascii_lower(t.text)
        if skip_next:
            skip_next = False
            continue
        if t.text in ("[", "]", "=") or low == "null":
            continue
        if low.startswith("%"):
            skip_next = low == "%vnam"
            continue
        if t.text.startswith("~") and len(t.text) > 1:
            spans.append((t.start + 1, t.end))
        else:
            spans.append((t.start, t.end))
    names = _positional(len(spans))
    return Layout(tuple(spans), names, {}, ascii_lower(tokens[-1].text))


def _none(kind: ElementKind, name: str, tokens: list[Token], lookup: Lookup | None) -> Layout:
    return Layout((), (), {})


def _u(kind: ElementKind, name: str, tokens: list[Token], lookup: Lookup | None) -> Layout:
    """``U``: a uniform distributed RC line (ngspice 39 manual, 6.2: ``UXXX n1 n2 n3
    mname``, a model of type ``urc``) or, with ngspice's PSpice compatibility, a
    PSpice-style digital primitive (``parasite.netlist.digital``). Told apart by
    form: the second field names a digital primitive and no ``urc`` model sits
    where a URC line's model would. Any other form is passed through (opaque)."""
    prim = primitive(tokens)
    why = "the second field names no digital primitive"
    if prim is not None and not _urc_model_at(tokens, lookup):
        found = digital_layout(tokens, prim)
        if not isinstance(found, str):
            spans, names = found
            return Layout(spans, names, {}, timing_model(tokens, prim))
        if lookup is not None:  # a URC line only with a urc model where its model sits
            return _opaque(name, found)
        why = found
    try:
        return _fixed(kind, name, tokens, lookup)
    except LayoutError as exc:
        return _opaque(name, f"not a URC line ({exc}), and as a digital primitive: {why}")


def _urc_model_at(tokens: list[Token], lookup: Lookup | None) -> bool:
    if lookup is None or not _plain(tokens, 4):
        return False
    model = lookup.model(tokens[4].text)
    return model is not None and model.type == "urc"


def _opaque(name: str, why: str) -> Layout:
    return Layout((), (), {}, opaque=f"{name}: nodes not told: {why}; the card is passed "
                  "through untouched and none of its terminals can take copper")


_RULES: dict[str, Callable[[ElementKind, str, list[Token], Lookup | None], Layout | None]] = {
    "u": _u,
    "fixed": _fixed,
    "controlled": _controlled,
    "model": _by_model,
    "subckt": _subckt,
    "xspice": _xspice,
    "none": _none,
}


def candidate_spans(tokens: list[Token]) -> list[tuple[int, int]]:
    """Every field that could be a node of a card whose nodes cannot be resolved
    (used to list node names conservatively)."""
    name = tokens[0].text
    kind = ELEMENT_KINDS[name[0].upper()]
    count = _count_plain(tokens, 1)
    if kind.max_nodes is not None:
        count = min(count, kind.max_nodes)
    return [(t.start, t.end) for t in tokens[1 : 1 + count]]
