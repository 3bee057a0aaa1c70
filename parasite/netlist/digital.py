"""PSpice-style digital primitives (``U`` cards) as ngspice 39 reads them.

With its PSpice compatibility mode (``set ngbehavior=psa`` in ``.spiceinit``)
ngspice 39 translates ``U`` instances inside a ``.subckt`` into XSPICE digital
code models (ngspice 39 release notes: "Extended support of digital U devices";
checked here with ``ngspice -b``). The general form (the PSpice reference
manual's digital primitive syntax, a trade convention)::

    UXXX type[(params)] dpwr dgnd node... tmodel iomodel [key=value ...]

Only the families whose node count follows from the type and its parameters
are given nodes (gates, gate arrays, compound gates, tristate gates,
flip-flops, latches, pull-ups); any other primitive (``LOGICEXP``,
``PINDLY``, ``STIM``, ...) or a card whose count does not match is of unknown
form: it is passed through untouched, and no copper may be placed on it.
"""

from __future__ import annotations

from collections.abc import Callable

from parasite.netlist.lines import ascii_lower
from parasite.netlist.tokens import Token

# type -> (inputs, outputs) from the integer parameters; inputs named in1.. ("in"
# when one), an enable "en" last for tristate kinds, outputs out1.. ("out" when one).
_Count = Callable[[list[int]], tuple[int, int] | None]


def _fixed_count(n_in: int, n_out: int) -> _Count:
    return lambda p: (n_in, n_out) if not p else None


def _gate(p: list[int]) -> tuple[int, int] | None:  # AND(n)
    return (p[0], 1) if len(p) == 1 and p[0] >= 1 else None


def _array(per: int | None) -> _Count:  # BUFA(w), ANDA(n,w), XORA(w)
    def count(p: list[int]) -> tuple[int, int] | None:
        if per is None:
            return (p[0] * p[1], p[1]) if len(p) == 2 and min(p) >= 1 else None
        return (per * p[0], p[0]) if len(p) == 1 and p[0] >= 1 else None
    return count


def _compound(p: list[int]) -> tuple[int, int] | None:  # AO(n,m)
    return (p[0] * p[1], 1) if len(p) == 2 and min(p) >= 1 else None


def _tristate(base: _Count) -> _Count:  # one enable input more
    def count(p: list[int]) -> tuple[int, int] | None:
        found = base(p)
        return None if found is None else (found[0] + 1, found[1])
    return count


_GATES: dict[str, _Count] = {"buf": _fixed_count(1, 1), "inv": _fixed_count(1, 1),
                             "xor": _fixed_count(2, 1), "nxor": _fixed_count(2, 1)}
for _g in ("and", "nand", "or", "nor"):
    _GATES[_g] = _gate
    _GATES[_g + "a"] = _array(None)
for _g in ("bufa", "inva"):
    _GATES[_g] = _array(1)
for _g in ("xora", "nxora"):
    _GATES[_g] = _array(2)
for _g in ("ao", "oa", "aoi", "oai"):
    _GATES[_g] = _compound
_TRISTATE = {g + "3" if not g.endswith("a") else g[:-1] + "3a": _tristate(c)
             for g, c in _GATES.items() if g not in ("ao", "oa", "aoi", "oai")}

# flip-flops and latches: fixed inputs, per-bit inputs and outputs (q, qb per bit)
_STORAGE: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "dff": (("preb", "clrb", "clk"), ("d",)),
    "jkff": (("preb", "clrb", "clkb"), ("j", "k")),
    "srff": (("preb", "clrb", "gate"), ("s", "r")),
    "dltch": (("preb", "clrb", "gate"), ("d",)),
}
_PULL = ("pullup", "pulldn")

# Every primitive name PSpice defines (the ones above and those whose nodes are
# not told): a U card whose second field is one of these is a digital primitive.
_OTHER = {"logicexp", "pindly", "constraint", "stim", "rom", "ram", "filestim",
          "pla", "cpla", "pla_ao", "pla_oa", "cpla_ao", "cpla_oa"}
PRIMITIVES = frozenset(_GATES) | frozenset(_TRISTATE) | frozenset(_STORAGE) | frozenset(
    _PULL) | frozenset(_OTHER)


def primitive(tokens: list[Token]) -> str | None:
    """The lower-case primitive name when field 1 of a ``U`` card names one."""
    if len(tokens) < 2 or tokens[1].depth:
        return None
    name = ascii_lower(tokens[1].text)
    return name if name in PRIMITIVES else None


def _params(tokens: list[Token]) -> tuple[list[str], int]:
    """The parenthesised fields right after the type, and the index after them."""
    i = 2
    out: list[str] = []
    while i < len(tokens) and tokens[i].depth > 0:
        out.append(tokens[i].text)
        i += 1
    return out, i


def _names(prim: str, p: list[int]) -> tuple[str, ...] | None:
    if prim in _STORAGE:
        if len(p) != 1 or p[0] < 1:
            return None
        fixed, per_bit = _STORAGE[prim]
        bits = range(1, p[0] + 1)
        ins = [f"{x}{b}" for x in per_bit for b in bits]
        outs = [f"q{b}" for b in bits] + [f"qb{b}" for b in bits]
        return (*fixed, *ins, *outs)
    if prim in _PULL:
        return tuple(f"out{b}" for b in range(1, p[0] + 1)) if len(p) == 1 and p[0] >= 1 else None
    count = _GATES.get(prim) or _TRISTATE.get(prim)
    found = None if count is None else count(p)
    if found is None:
        return None
    n_in, n_out = found
    tristate = prim in _TRISTATE
    data = n_in - (1 if tristate else 0)
    ins = ["in"] if data == 1 else [f"in{k}" for k in range(1, data + 1)]
    if tristate:
        ins.append("en")
    outs = ["out"] if n_out == 1 else [f"out{k}" for k in range(1, n_out + 1)]
    return (*ins, *outs)


def layout(tokens: list[Token], prim: str) -> tuple[tuple[tuple[int, int], ...],
                                                      tuple[str, ...]] | str:
    """Node spans and terminal names (``dpwr``, ``dgnd``, then the primitive's
    pins), or a string saying why the nodes cannot be told."""
    texts, start = _params(tokens)
    if not all(t.isdecimal() for t in texts):
        return f"{prim} parameters {texts} are not all plain integers"
    names = _names(prim, [int(t) for t in texts])
    if names is None:
        return f"the nodes of a {prim.upper()}{'(' + ','.join(texts) + ')' if texts else ''} " \
               "primitive are not told here"
    plain = start
    while plain < len(tokens) and _plain(tokens, plain):
        plain += 1
    need = 2 + len(names) + 2
    if plain - start != need:
        return (f"a {prim.upper()} primitive has {need} fields (dpwr dgnd {len(names)} node(s) "
                f"tmodel iomodel) before any key=value, found {plain - start}")
    spans = tuple((t.start, t.end) for t in tokens[start : start + 2 + len(names)])
    return spans, ("dpwr", "dgnd", *names)


def timing_model(tokens: list[Token], prim: str) -> str | None:
    """The lower-case timing-model name of a card whose :func:`layout` succeeded."""
    _, start = _params(tokens)
    i = len(tokens)
    for j in range(start, len(tokens)):
        if not _plain(tokens, j):
            i = j
            break
    return ascii_lower(tokens[i - 2].text) if i - 2 >= start else None


def _plain(tokens: list[Token], i: int) -> bool:
    t = tokens[i].text
    if t == "=" or t[0] in "{'\"":
        return False
    return not (i + 1 < len(tokens) and tokens[i + 1].text == "=")
