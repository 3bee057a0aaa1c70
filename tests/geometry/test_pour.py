"""The ``[[pour]]`` entry: parsing in SI units and validation with key paths.

Geometric facts (a crossing outline is not a valid polygon, a hole must lie in
the outline, areas by the shoelace formula) are checked by shapely (GEOS,
OGC simple-features validity rules); the expected values here are worked by
hand from the TOML text.
"""

from __future__ import annotations

import sys

import pytest

from geometry.errors import RoutesError
from geometry.locate import toml_lines
from geometry.model import Layer
from geometry.pour import Pour, check_pour_overlaps, parse_pour_entry
from geometry.routes import Context

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

LAYERS = {
    "top": Layer("top", z=1.5e-3, thickness=35e-6),
    "gnd": Layer("gnd", z=1.2e-3, thickness=35e-6, plane="0"),
}


def _parse(text: str) -> tuple[Context, list[Pour]]:
    ctx = Context(file="board.routes.toml", lines=toml_lines(text), units="mm", scale=1e-3,
                  layers=LAYERS)
    data = tomllib.loads(text)
    return ctx, [parse_pour_entry(ctx, raw, i) for i, raw in enumerate(data["pour"])]


GOOD = """
[[pour]]
net = "GND"
layer = "gnd"
outline = [[0, 0], [20, 0], [20, 10], [0, 10]]
holes = [[[5, 4], [15, 4], [15, 4.5], [5, 4.5]]]
cell = 0.5
name = "return"
"""


def test_parse_in_si_units() -> None:
    """Lengths times the unit (mm -> m, exact decimal factors); gnd stored as 0
    (SPICE practice, as for every entry); area 200 - 10 x 0.5 = 195 mm^2 by hand."""
    _, (p,) = _parse(GOOD)
    assert p.net == "0" and p.layer == "gnd" and p.name == "return" and p.index == 0
    assert p.outline[2] == pytest.approx((20e-3, 10e-3), rel=1e-15)
    assert p.cell == pytest.approx(0.5e-3, rel=1e-15)
    assert p.polygon.area == pytest.approx(195e-6, rel=1e-12)
    assert p.line == 2


def _expect(text: str, key: str, message: str, line: int | None = None) -> None:
    with pytest.raises(RoutesError, match=message) as err:
        ctx, pours = _parse(text)
        check_pour_overlaps(ctx, pours)
    assert err.value.key == key
    assert err.value.file == "board.routes.toml"
    if line is not None:
        assert err.value.line == line


BASE = '[[pour]]\nnet = "0"\nlayer = "top"\n'


@pytest.mark.parametrize(("body", "key", "message"), [
    ('outline = [[0, 0], [10, 10], [10, 0], [0, 10]]\n', "pour[0].outline",
     r"crosses or touches itself \(self-intersection near \[5, 5\] mm\)"),
    ('outline = [[0, 0], [10, 0], [20, 0]]\n', "pour[0].outline", "zero area"),
    ('outline = [[0, 0], [10, 0]]\n', "pour[0].outline", "at least three corners"),
    ('outline = [[0, 0], [10, 0], [10, 10]]\nholes = [[[8, 1], [12, 1], [12, 2]]]\n',
     "pour[0].holes[0]", "not inside the outline"),
    ('outline = [[0, 0], [10, 0], [10, 10], [0, 10]]\nholes = [[[1, 1], [2, 1], [2, 2], [1, 2]], '
     '[[1.5, 1.5], [3, 1.5], [3, 3]]]\n', "pour[0].holes[1]", "overlaps hole 0"),
    ('outline = [[0, 0], [10, 0], [10, 10]]\ncell = 0\n', "pour[0].cell", "positive length in mm"),
    ('outline = [[0, 0], [10, 0], [10, 10]]\nsize = 1\n', "pour[0].size", "unknown key 'size'"),
    ('outline = [[0, 0], [10, 0], [10, "a"]]\n', "pour[0].outline[2][1]", "coordinate in mm"),
])
def test_bad_pour(body: str, key: str, message: str) -> None:
    """Each error names the entry's key path (0-based, as the routes file's other
    entries) and says what is accepted."""
    _expect(BASE + body, key, message)


def test_pour_on_another_nets_plane() -> None:
    _expect('[[pour]]\nnet = "vin"\nlayer = "gnd"\noutline = [[0, 0], [1, 0], [1, 1]]\n',
            "pour[0].layer", "return plane of net '0'")


def test_overlapping_pours_of_different_nets() -> None:
    """Two squares 10 x 10 mm offset by (5, 5): they share 25 mm^2 (by hand); the
    later entry is named, with its line."""
    text = (BASE + 'outline = [[0, 0], [10, 0], [10, 10], [0, 10]]\n\n'
            '[[pour]]\nnet = "vcc"\nlayer = "top"\noutline = [[5, 5], [15, 5], [15, 15], [5, 15]]\n')
    _expect(text, "pour[1].outline", r"overlaps pour\[0\] of net '0' on layer 'top' \(shared area "
            r"25 mm\^2\)", line=9)


def test_touching_or_same_net_pours_are_fine() -> None:
    """Pours that only share an edge (zero area) and overlapping pours of one net
    are accepted."""
    text = (BASE + 'outline = [[0, 0], [10, 0], [10, 10], [0, 10]]\n\n'
            '[[pour]]\nnet = "vcc"\nlayer = "top"\noutline = [[10, 0], [20, 0], [20, 10], [10, 10]]\n\n'
            '[[pour]]\nnet = "0"\nlayer = "top"\noutline = [[5, 5], [8, 5], [8, 8]]\n')
    ctx, pours = _parse(text)
    check_pour_overlaps(ctx, pours)
    assert len(pours) == 3
