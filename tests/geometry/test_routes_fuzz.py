"""No traceback reaches the user: whatever a routes file holds, loading it
and building its graph either succeeds or raises RoutesError (hypothesis
mutates the demo board: any value anywhere replaced by any JSON value, keys
added or removed)."""

from __future__ import annotations

import copy
import json
import sys
from typing import Any

from hypothesis import given, settings
from hypothesis import strategies as st

from geometry.errors import RoutesError
from geometry.graph import build_graph
from geometry.routes import parse_routes
from tests.boards import DEMO as DEMO_DIR

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

DEMO = DEMO_DIR / "buck.routes.toml"
BASE = tomllib.loads(DEMO.read_text())

json_values = st.recursive(
    st.none() | st.booleans() | st.integers(-5, 5) | st.floats(allow_nan=False, width=32)
    | st.text(max_size=6) | st.sampled_from(["top", "in1", "0", "M1:d", "2n", "mm"]),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=4), inner, max_size=3),
    max_leaves=6,
)


def _paths(obj: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    out = [prefix]
    if isinstance(obj, dict):
        for k, v in obj.items():
            out += _paths(v, prefix + (k,))
    elif isinstance(obj, list):
        for k, v in enumerate(obj):
            out += _paths(v, prefix + (k,))
    return out


PATHS = _paths(BASE)[1:]


@st.composite
def mutated(draw: st.DrawFn) -> dict[str, Any]:
    data = copy.deepcopy(BASE)
    for _ in range(draw(st.integers(1, 3))):
        path = draw(st.sampled_from(PATHS))
        parent: Any = data
        try:
            for part in path[:-1]:
                parent = parent[part]
            action = draw(st.sampled_from(["replace", "delete", "add"]))
            if action == "replace":
                parent[path[-1]] = draw(json_values)
            elif action == "delete":
                del parent[path[-1]]
            elif isinstance(parent, dict):
                parent[draw(st.text(max_size=5))] = draw(json_values)
        except (KeyError, IndexError, TypeError):
            continue  # an earlier mutation removed or replaced the parent
    return data


def _nets(routes: Any) -> list[str]:
    # any net for each pin: the graph must reject pins on the wrong net with RoutesError
    return ["sw" if k % 3 else "0" for k in range(len(routes.pins))]


@settings(max_examples=300, deadline=None)
@given(mutated())
def test_mutated_demo_raises_only_routes_errors(data: dict[str, Any]) -> None:
    try:
        routes = parse_routes(json.dumps(data).encode(), "mutant.routes.json", "json")
        build_graph(routes, _nets(routes))
    except RoutesError as exc:
        text = str(exc)
        assert text.startswith("mutant.routes.json") and ": error: " in text


@settings(max_examples=200, deadline=None)
@given(st.binary(max_size=200) | st.text(max_size=200).map(str.encode))
def test_arbitrary_bytes(data: bytes) -> None:
    for fmt in ("toml", "json"):
        try:
            parse_routes(data, "noise", fmt)  # type: ignore[arg-type]
        except RoutesError:
            pass
