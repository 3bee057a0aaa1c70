"""Loading good routes files: SI conversion, defaults, TOML/JSON equivalence,
SPICE-style values, line lookup of key paths."""

from __future__ import annotations

import json
import sys

import pytest

from geometry.locate import format_path, json_lines, toml_lines
from geometry.model import Copper, canonical_net
from geometry.routes import ENTRY_PARSERS, load_routes, parse_routes
from geometry.values import parse_spice_number
from tests.boards import DEMO as DEMO_DIR
from tests.boards import ROUTES as ROUTES_DIR

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

ROUTES = ROUTES_DIR
DEMO = DEMO_DIR / "buck.routes.toml"


def test_units_converted_to_metres_once() -> None:
    """1 mil = 25.4e-6 m exactly (international inch of 1959 = 25.4 mm)."""
    r = load_routes(ROUTES / "units_mil.routes.toml")
    (t,) = r.traces
    assert t.points == ((0.0, 0.0), pytest.approx((0.0254, 0.0), rel=1e-15, abs=0))
    assert t.width == pytest.approx(20 * 25.4e-6, rel=1e-15)
    assert r.layers["top"].z == pytest.approx(62 * 25.4e-6, rel=1e-15)
    assert r.layers["top"].thickness == pytest.approx(1.4 * 25.4e-6, rel=1e-15)
    assert r.snap == 1e-6  # default: 1e-6 m whatever the file's units


def test_snap_is_in_file_units() -> None:
    r = load_routes(ROUTES / "loops.routes.toml")
    assert r.units == "um"
    assert r.snap == pytest.approx(0.5e-6)


def test_defaults_and_copper_table() -> None:
    r = load_routes(ROUTES / "t_junction.routes.toml")
    assert r.copper == Copper()  # IEC 60028 annealed copper at 20 degC
    assert r.loops == () and r.vias == () and r.nets == {} and r.probes == ()
    c = load_routes(ROUTES / "loops.routes.toml").copper
    assert c.resistivity == 1.8e-8 and c.temperature == 85.0
    assert c.reference_temperature == 20.0 and c.temperature_coefficient == 0.00393


def test_nets_are_canonical() -> None:
    r = load_routes(ROUTES / "t_junction.routes.toml")
    assert [t.net for t in r.traces] == ["a", "a"]  # second written "A"
    p = load_routes(ROUTES / "plane_net.routes.toml")
    assert p.layers["gnd"].plane == "0"  # written "GND"
    assert p.vias[0].net == "0"  # written "gnd"
    assert canonical_net(" Gnd ") == "0" and canonical_net("SW") == "sw"


def test_entries_keep_file_order_index_and_line() -> None:
    r = load_routes(ROUTES / "via_stack.routes.toml")
    assert [t.index for t in r.traces] == [0, 1, 2]
    assert [t.line for t in r.traces] == [24, 30, 36]  # the [[trace]] headers
    v = r.vias[0]
    assert (v.from_layer, v.to_layer, v.line) == ("top", "bottom", 42)
    assert v.diameter == pytest.approx(0.3e-3) and v.wall == pytest.approx(0.025e-3)
    assert r.pins[2].element == "r3" and r.pins[2].term == "1" and r.pins[2].terminal == "R3:1"
    assert list(r.layers) == ["top", "in1", "in2", "bottom"]


def test_json_and_toml_give_the_same_routes() -> None:
    a = load_routes(ROUTES / "t_junction.routes.toml")
    b = load_routes(ROUTES / "t_junction.routes.json")
    assert a.traces == tuple(
        type(t)(**{**t.__dict__, "line": a.traces[k].line}) for k, t in enumerate(b.traces)
    )
    assert [(p.terminal, p.at, p.layer) for p in a.pins] == [(p.terminal, p.at, p.layer) for p in b.pins]
    assert a.layers["top"].z == b.layers["top"].z


def test_demo_toml_round_trips_through_json() -> None:
    """The JSON form of the demo (converted with the standard library) loads to
    the same data model."""
    data = tomllib.loads(DEMO.read_text())
    a = load_routes(DEMO)
    b = parse_routes(json.dumps(data).encode(), "demo.routes.json", "json")
    strip = lambda xs: [{**x.__dict__, "line": None} for x in xs]  # noqa: E731
    for kind in ("traces", "vias", "pins", "loops"):
        assert strip(getattr(a, kind)) == strip(getattr(b, kind))
    assert a.nets["0"].anchor == b.nets["0"].anchor == "VIN:n"


def test_loops() -> None:
    r = load_routes(ROUTES / "loops.routes.toml")
    power, gate, nobudget = r.loops
    assert power.name == "power loop" and power.path == ("C1:1", "M1:d", "M1:s", "C1:2")
    assert power.limit == pytest.approx(2.5e-9) and power.frequency == 100e6
    assert gate.limit == pytest.approx(10e-9) and gate.frequency == pytest.approx(1e6)
    assert nobudget.limit == 4e-9 and nobudget.frequency is None
    d = load_routes(DEMO).loops
    assert [lp.name for lp in d] == ["hot loop", "low-side gate loop"]
    assert d[0].limit == pytest.approx(3e-9) and d[1].limit == pytest.approx(10e-9)


@pytest.mark.parametrize(
    ("text", "value"),
    [
        # scale factors of the ngspice manual (section 2.3, numbers); "M" is milli
        ("2n", 2e-9), ("2nH", 2e-9), ("2N", 2e-9), ("1.5meg", 1.5e6), ("1MEGHz", 1e6),
        ("10m", 10e-3), ("10M", 10e-3), ("3u", 3e-6), ("4p", 4e-12), ("5f", 5e-15),
        ("2k", 2e3), ("1g", 1e9), ("1t", 1e12), ("7", 7.0), ("1e-9", 1e-9), (".5n", 0.5e-9),
        ("5H", 5.0), ("-2n", -2e-9),
    ],
)
def test_spice_numbers(text: str, value: float) -> None:
    assert parse_spice_number(text) == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize("text", ["", "n", "two", "2 n", "2n/s", "1e999", "nan"])
def test_not_spice_numbers(text: str) -> None:
    assert parse_spice_number(text) is None


def test_key_paths_and_line_scan() -> None:
    assert format_path(("trace", 3, "width")) == "trace[3].width"
    assert format_path(("layers", "in 1", "z")) == 'layers."in 1".z'
    text = (
        'units = "mm"\n'
        '[layers."in 1"]\n'
        "z = 1\n"
        "[[trace]]\n"
        "points = [\n"
        "  [0, 0],  # [not a header]\n"
        "  [1, 0],\n"
        "]\n"
        'name = """two\n'
        "[lines]\"\"\"\n"
        "[[trace]]\n"
        "width = 2\n"
    )
    m = toml_lines(text)
    assert m.line_of(("layers", "in 1", "z")) == 3
    assert m.line_of(("trace", 0, "points", 1)) == 7
    assert m.line_of(("trace", 0, "points", 1, 0)) == 7
    assert m.line_of(("trace", 1, "width")) == 12
    assert m.line_of(("trace", 1, "missing")) == 11  # falls back to the entry
    assert m.line_of(("nothing",)) is None
    j = json_lines('{\n "trace": [\n  {"width": 1},\n  {\n   "width": 2\n  }\n ]\n}')
    assert j.line_of(("trace", 1, "width")) == 5
    assert j.line_of(("trace", 0)) == 3


def test_entry_parsers_table_has_a_probe_hook() -> None:
    """Each [[kind]] has its parser in one table; the probes feature plugs in there."""
    assert list(ENTRY_PARSERS) == ["trace", "via", "pin", "loop", "probe", "pour", "part"]


def test_bom_and_empty_board() -> None:
    r = parse_routes('\ufeffformat = "parasite-routes/1"\nunits = "m"\n'.encode(), "x.toml", "toml")
    assert r.layers == {} and r.traces == ()
