"""Structure-aware hypothesis strategies for the fuzz suite (issue 19): a
valid invented board (netlist + routes file) mutated card by card and key by
key, and command lines over it. Never imported by the library."""

from __future__ import annotations

import json
import math
from typing import Any

from hypothesis import strategies as st

# -- numbers: the edges of every range, and beyond ---------------------------------------
HOSTILE_FLOATS = [0.0, -0.0, 5e-324, 1e-300, 1e-30, 1e-9, 1e-6, 0.035, 1.0, 10.0, 1e4,
                  1e30, 1e308, -1.0, -1e308, math.inf, -math.inf, math.nan]
HOSTILE_INTS = [0, 1, -1, 2, 10**20, 10**300, -(10**300)]

plausible = st.one_of(st.floats(min_value=0.01, max_value=50.0), st.integers(0, 40))
numbers = st.one_of(
    plausible,  # first: what hypothesis shrinks toward, and a third of the draws
    st.sampled_from(HOSTILE_FLOATS),
    st.sampled_from(HOSTILE_INTS),
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(min_value=-10**6, max_value=10**6),
    plausible,
)
short_text = st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cs",)),
                     max_size=12)
scalars = st.one_of(numbers, short_text, st.booleans())


def _value_for(old: Any) -> st.SearchStrategy[Any]:
    """A replacement for a value: mostly of the same shape, sometimes not."""
    if isinstance(old, bool):
        return st.one_of(st.booleans(), scalars)
    if isinstance(old, (int, float)):
        return st.one_of(plausible, numbers, scalars)
    if isinstance(old, str):
        return st.one_of(short_text, st.sampled_from(["R1:1", "R1:\u00b9", "V1:p", "a", "0",
                                                      "top", "gnd", "", " ", "x:y:z"]),
                         scalars)
    if isinstance(old, list):
        return st.one_of(
            st.lists(scalars, max_size=4),
            st.lists(st.lists(numbers, min_size=2, max_size=3), max_size=6),
            scalars,
        )
    return st.one_of(scalars, st.dictionaries(short_text, scalars, max_size=3))


def _paths(obj: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    out = [prefix] if prefix else []
    if isinstance(obj, dict):
        for k, v in obj.items():
            out += _paths(v, prefix + (k,))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            out += _paths(v, prefix + (i,))
    return out


def _set(obj: Any, path: tuple[Any, ...], value: Any) -> None:
    for k in path[:-1]:
        obj = obj[k]
    obj[path[-1]] = value


def _delete(obj: Any, path: tuple[Any, ...]) -> None:
    for k in path[:-1]:
        obj = obj[k]
    del obj[path[-1]]


BASE_ROUTES: dict[str, Any] = {
    "format": "parasite-routes/1",
    "units": "mm",
    "snap": 0.001,
    "copper": {"resistivity": 1.72e-8, "temperature": 25.0},
    "layers": {"top": {"z": 1.565, "thickness": 0.035},
               "gnd": {"z": 1.2, "thickness": 0.035, "plane": "0"}},
    "trace": [{"net": "a", "layer": "top", "width": 0.5, "points": [[0, 0], [10, 0]]},
              {"net": "b", "layer": "top", "width": 0.5, "points": [[12, 0], [22, 0], [22, 5]]}],
    "via": [{"net": "0", "at": [30, 0], "from": "top", "to": "gnd", "diameter": 0.3}],
    "pin": [{"terminal": "V1:p", "at": [0, 0], "layer": "top"},
            {"terminal": "R1:1", "at": [10, 0], "layer": "top"},
            {"terminal": "R1:2", "at": [12, 0], "layer": "top"},
            {"terminal": "R2:1", "at": [22, 5], "layer": "top"},
            {"terminal": "R2:2", "at": [22, 5], "layer": "gnd"},
            {"terminal": "V1:n", "at": [0, 0], "layer": "gnd"}],
    "loop": [{"name": "main", "path": ["V1:p", "R1:1", "R1:2", "R2:1", "R2:2", "V1:n", "V1:p"],
              "limit": "50n"}],
    "probe": [{"name": "p1", "tip": {"layer": "top", "at": [5, 0]},
               "ground": {"layer": "top", "at": [15, 0]},
               "tip_lead": {"points": [[5, 0, 1.6], [5, 0, 10]], "radius": 0.2},
               "ground_lead": {"points": [[15, 0, 1.6], [15, 0, 10]], "radius": 0.2},
               "instrument": "10x"}],
}
"""An invented board: V1 -> trace a -> R1 -> trace b -> R2 -> the plane -> V1."""

BASE_NETLIST = ["fuzz board (invented)", "V1 a 0 DC 1", "R1 a b 10", "R2 b 0 10",
                ".tran 1n 10n", ".end"]


@st.composite
def routes_objects(draw: st.DrawFn) -> dict[str, Any]:
    """The base routes object with a few keys replaced, deleted or added."""
    obj = json.loads(json.dumps(BASE_ROUTES))
    for _ in range(draw(st.integers(0, 3))):
        paths = _paths(obj)
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        try:
            old: Any = obj
            for k in path:
                old = old[k]
        except (KeyError, IndexError, TypeError):
            continue
        action = draw(st.sampled_from(["replace", "replace", "replace", "delete", "grow"]))
        if action == "delete":
            _delete(obj, path)
        elif action == "grow" and isinstance(old, list):
            old.extend(draw(st.lists(st.just(old[-1] if old else 0), max_size=3)))
        else:
            _set(obj, path, draw(_value_for(old)))
    return obj


def _toml_value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v)  # a TOML basic string is a JSON string here
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{json.dumps(k)} = {_toml_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(type(v))


def to_toml(obj: Any) -> str:
    """TOML text of a routes object (tables of tables, arrays of tables inline)."""
    if not isinstance(obj, dict):
        return f"x = {_toml_value(obj)}\n"
    lines = [f"{json.dumps(k)} = {_toml_value(v)}" for k, v in obj.items()]
    return "\n".join(lines) + "\n"


def _element(draw: st.DrawFn) -> str:
    letter = draw(st.sampled_from("RCLVIKXEGHMDQ"))
    name = letter + draw(st.sampled_from(["1", "2", "9", "x", "\u00b9", ""]))
    nodes = draw(st.lists(st.sampled_from(["a", "b", "0", "gnd", "c", "(", "=", "1e308"]),
                          max_size=4))
    value = draw(st.sampled_from(["10", "1e308", "1e-320", "nan", "inf", "1" + "0" * 400,
                                  "2n", "5mil", "", "sub", "{x}", "params: x=1"]))
    return " ".join([name, *nodes, value])


@st.composite
def netlist_texts(draw: st.DrawFn) -> tuple[str, dict[str, str]]:
    """The base netlist with cards inserted, deleted or changed; and the
    included files it refers to (name -> text)."""
    lines = list(BASE_NETLIST)
    extra: dict[str, str] = {}
    for _ in range(draw(st.integers(0, 4))):
        kind = draw(st.sampled_from(["element", "include", "subckt", "delete", "junk", "lib",
                                     "continuation"]))
        where = draw(st.integers(1, len(lines)))
        if kind == "element":
            lines.insert(where, _element(draw))
        elif kind == "include":
            target = draw(st.sampled_from(["inc.cir", "missing.cir", "b.cir", ".", "inc2.cir"]))
            lines.insert(where, f".include {target}")
            extra["inc.cir"] = draw(st.sampled_from(["R9 a 0 1\n", ".include inc.cir\n",
                                                     ".include inc2.cir\n", "\n", "R1 a b 5\n"]))
            extra["inc2.cir"] = ".include inc.cir\n"
        elif kind == "lib":
            lines.insert(where, draw(st.sampled_from([".lib inc.cir s", ".lib missing.cir x",
                                                      ".lib"])))
            extra.setdefault("inc.cir", ".lib s\nR8 a 0 1\n.endl s\n")
        elif kind == "subckt":
            depth = draw(st.sampled_from([1, 2, 70, 200]))
            close = draw(st.booleans())
            body = [f".subckt s{i} x y" for i in range(depth)] + ["R7 x y 1"]
            body += [".ends"] * (depth if close else depth - 1)
            lines[where:where] = body
        elif kind == "delete" and len(lines) > 1:
            del lines[where - 1]
        elif kind == "continuation":
            lines.insert(where, "+ " + draw(st.sampled_from(["1", "a b", "", "= 3"])))
        else:
            lines.insert(where, draw(short_text))
    return "\n".join(lines) + "\n", extra


OUTPUT_NAMES = ["out.cir", "out.cir", "out.cir", "", ".", "sub", "sub/", "missing/o.cir",
                "b.cir", "b.routes.toml", "inc.cir", "-", "r.json"]
OPTION_VALUES = ["1e8", "100meg", "5e-324", "1e308", "nan", "inf", "-1", "0", "0.5", "1",
                 "0.02", "abc", "", "1e12", "1e13"]


@st.composite
def command_lines(draw: st.DrawFn) -> list[str]:
    """A subcommand and its options (the two input files are b.cir and the routes file)."""
    cmd = draw(st.sampled_from(["augment", "augment", "report", "check"]))
    args = [cmd]
    if cmd != "check":
        if draw(st.booleans()):
            args += ["-o", draw(st.sampled_from(OUTPUT_NAMES))]
        if draw(st.booleans()):
            args += ["--frequency", draw(st.sampled_from(OPTION_VALUES))]
        if draw(st.booleans()):
            args += ["--min-coupling", draw(st.sampled_from(OPTION_VALUES))]
    if cmd == "augment" and draw(st.booleans()):
        args += ["--report", draw(st.sampled_from(OUTPUT_NAMES))]
    if cmd == "report" and draw(st.booleans()):
        args += ["--format", draw(st.sampled_from(["text", "json", "csv", "xml"]))]
    return args
