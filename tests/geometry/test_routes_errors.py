"""Bad routes files: one fixture per error kind of the routes-file spec.

Each message must name the file, the line, the key path and the bad value
(``FILE:LINE: error: KEY: ...VALUE...``); line numbers are read off the
fixture files by hand. Only :class:`RoutesError` may come out (no traceback
reaches the user: the command line prints ``str(error)``).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from geometry.errors import RoutesError
from geometry.graph import build_graph
from geometry.routes import load_routes, parse_routes
from parasite.errors import ParasiteError
from tests.boards import ROUTES as ROUTES_DIR

BAD = ROUTES_DIR / "bad"

# file stem -> (line, key path, regex for the value and what is accepted)
CASES: dict[str, tuple[int | None, str | None, str]] = {
    "unknown_key": (16, "trace[0].widht", r"unknown key 'widht'; accepted keys here: net, layer, width"),
    "unknown_top_key": (3, "snapp", r"unknown top-level key 'snapp'; accepted: format, units, snap"),
    "wrong_type": (16, "trace[0].width", r"must be a positive length in mm; got the string '2mm'"),
    "negative_width": (22, "trace[1].width", r"must be a positive length in mm; got -0\.5"),
    "zero_thickness": (6, "layers.top.thickness", r"must be a positive length in mm; got 0"),
    "negative_diameter": (24, "via[0].diameter", r"positive length in mm; got -0\.3"),
    "wall_too_thick": (25, "via[0].wall", r"wall 0\.2 mm must be thinner than the barrel's radius 0\.15 mm"),
    "via_one_layer": (23, "via[0].to", r"two different layers; 'from' and 'to' are both 'top'"),
    "unknown_layer": (15, "trace[0].layer", r"unknown layer 'bottom'; the layers are: 'top', 'in1'"),
    "overlapping_layers": (13, "layers.in2",
                           r"layer 'in2' \(z 1\.22 mm to 1\.255 mm\) overlaps layer 'in1' "
                           r"\(z 1\.2 mm to 1\.235 mm\)"),
    "zero_length_segment": (17, "trace[0].points[2]",
                            r"zero-length segment: point \[10, 0\] is 0 mm from the previous point"),
    "too_few_points": (17, "trace[0].points", r"at least two points \[x, y\]; got 1"),
    "bad_point": (17, "trace[0].points[1]", r"must be a point \[x, y\] in mm; got an array of 3 items"),
    "not_finite": (17, "trace[0].points[1][0]", r"coordinate in mm \(finite\); got nan"),
    "trace_on_plane": (15, "trace[0].layer", r"layer 'in1' is a return plane \(of net '0'\)"),
    "duplicate_pin": (25, "pin[1].terminal",
                      r"duplicate pin: terminal 'm1:D' is already placed by pin\[0\]"),
    "bad_terminal": (20, "pin[0].terminal", r"'ELEMENT:TERMINAL'.*got 'M1d'"),
    "missing_key": (13, "pin[0]", r"missing required key 'at'"),
    "missing_format": (None, None, r"missing required key 'format' \(write format = 'parasite-routes/1'\)"),
    "wrong_format": (1, "format", r"unsupported format 'parasite-routes/7'; this version reads"),
    "bad_units": (2, "units", r"unknown unit 'cm'; accepted: 'm', 'mm', 'um', 'mil', 'in'"),
    "bad_snap": (3, "snap", r"must be a positive length in mm; got 0"),
    "bad_resistivity": (5, "copper.resistivity", r"positive number in ohm\*m; got -1\.7e-08"),
    "bad_net_name": (14, "trace[0].net", r"netlist node name .*got 'a b'"),
    "bad_loop_limit": (16, "loop[0].limit", r"SPICE-style value such as '2n'; got 'two nano'"),
    "negative_loop_frequency": (16, "loop[0].frequency", r"positive number in Hz .*got -1000000\.0"),
    "duplicate_loop": (18, "loop[1].name", r"duplicate loop name 'hot loop' \(also loop\[0\]\)"),
    "net_without_copper": (19, "nets.b", r"net 'b' has no copper in this file; nets with copper: '0', 'a'"),
    "probe_missing_key": (13, "probe[0]", r"missing required key 'tip'"),
    "not_toml": (16, None, r"not valid TOML: Invalid value"),
}

JSON_CASES: dict[str, tuple[int | None, str | None, str]] = {
    "not_json": (4, None, r"not valid JSON: Expecting property name enclosed in double quotes"),
    "duplicate_key": (4, "units", r"duplicate key 'units'"),
    "wrong_type": (8, "trace[1].width", r"positive length in mm; got the boolean true"),
}


def _pattern(path: Path, line: int | None, key: str | None, value: str) -> str:
    where = f"{path}:{line}: error: " if line is not None else f"{path}: error: "
    if line is None and key is not None:
        where = f"{path}: {key}: error: "
    elif key is not None:
        where += f"{key}: "
    return "^" + re.escape(where) + ".*" + value


@pytest.mark.parametrize("stem", sorted(CASES))
def test_bad_toml(stem: str) -> None:
    path = BAD / f"{stem}.routes.toml"
    line, key, value = CASES[stem]
    with pytest.raises(RoutesError, match=_pattern(path, line, key, value)) as info:
        load_routes(path)
    assert info.value.file == str(path)
    assert info.value.key == key


@pytest.mark.parametrize("stem", sorted(JSON_CASES))
def test_bad_json(stem: str) -> None:
    path = BAD / f"{stem}.routes.json"
    line, key, value = JSON_CASES[stem]
    with pytest.raises(RoutesError, match=_pattern(path, line, key, value)):
        load_routes(path)


def test_not_utf8() -> None:
    path = BAD / "not_utf8.routes.toml"
    with pytest.raises(RoutesError, match=re.escape(f"{path}:3: error: ") + "the file is not UTF-8"):
        load_routes(path)


def test_every_bad_fixture_is_checked() -> None:
    """A fixture added to bad/ without an expected message would check nothing."""
    stems = {p.name.split(".")[0] for p in BAD.iterdir()}
    covered = set(CASES) | set(JSON_CASES) | set(GRAPH_CASES) | {"not_utf8"}
    assert stems == covered


def test_unreadable_and_unknown_suffix(tmp_path: Path) -> None:
    missing = tmp_path / "none.routes.toml"
    with pytest.raises(RoutesError, match=re.escape(f"{missing}: error: cannot read the file")):
        load_routes(missing)
    odd = tmp_path / "board.routes.yaml"
    odd.write_text("units: mm\n")
    with pytest.raises(RoutesError, match=r"cannot tell the format from the suffix '\.yaml'"):
        load_routes(odd)


def test_routes_error_is_a_parasite_error() -> None:
    """The command line turns every ParasiteError into a message and exit code 1."""
    with pytest.raises(ParasiteError):
        parse_routes(b"units = 3", "x.routes.toml", "toml")


# ---- errors found while building the copper graph --------------------------

# stem -> (nets of the pins, line, key path, regex)
GRAPH_CASES: dict[str, tuple[list[str], int | None, str, str]] = {
    "pin_off_copper": (["a", "a"], 30, "pin[1].at",
                       r"pin 'R2:1' at \[4, 2\.5\] mm on layer 'top' lies on no copper of its net "
                       r"'a'; the nearest copper of net 'a' is trace\[0\] on layer 'top', its "
                       r"centre line 2\.5 mm away \(its edge 2 mm\)"),
    "pin_on_other_net": (["a", "a"], 30, "pin[1].at",
                         r"pin 'R2:1' at \[6, 5\.2\] mm on layer 'top' lies on copper of net 'b' "
                         r"\(trace\[1\]\), but its terminal is on net 'a' in the netlist"),
    "pin_not_reached": (["a", "a"], 36, "pin[1]",
                        r"pin 'R2:1' of net 'a' is not connected through copper to the net's "
                        r"anchor, pin 'R1:1' \(pin\[0\]\)"),
    "anchor_not_placed": (["a"], 13, "nets.a.anchor",
                          r"the anchor 'R9:1' of net 'a' is not placed by any \[\[pin\]\] of that "
                          r"net; pins of net 'a': 'R1:1'"),
    "pin_on_other_plane": (["a", "a"], 30, "pin[1].at",
                           r"pin 'R2:1' is on net 'a' .* lies on layer 'in1', the return plane of "
                           r"net '0'"),
    "pin_net_without_copper": (["a", "c"], 30, "pin[1].at",
                               r"lies on copper of net 'a' \(trace\[0\]\), but its terminal is on "
                               r"net 'c' in the netlist; net 'c' has no copper in this routes file"),
}


@pytest.mark.parametrize("stem", sorted(GRAPH_CASES))
def test_graph_errors(stem: str) -> None:
    path = BAD / f"{stem}.routes.toml"
    nets, line, key, value = GRAPH_CASES[stem]
    routes = load_routes(path)
    with pytest.raises(RoutesError, match=_pattern(path, line, key, value)):
        build_graph(routes, nets)
