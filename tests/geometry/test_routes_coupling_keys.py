"""The routes file's keys for loops as neighbours: ``[[loop]] mutual`` (limits on
the mutual with other loops), ``[[loop]] didt`` and ``[[part]]`` (a part's own
inductance at a terminal). SPICE-style values per the SPICE number syntax
(common practice: ``n`` = 1e-9, ``meg`` = 1e6)."""

from __future__ import annotations

import pytest

from geometry.errors import RoutesError
from geometry.routes import parse_routes

HEAD = """format = "parasite-routes/1"
units = "mm"
[layers.top]
z = 1.5
thickness = 0.035
"""
LOOPS = """
[[loop]]
name = "power"
path = ["C1:1", "Q1:d", "Q1:s", "C1:2"]
didt = "2meg"

[[loop]]
name = "gate"
path = ["U1:out", "Q1:g", "Q1:s", "U1:gnd"]
mutual = [{loop = "power", limit = "0.5n"}]
"""


def _parse(text: str):
    return parse_routes((HEAD + text).encode(), "b.routes.toml", "toml")


def test_keys_are_read_in_si() -> None:
    """Values come out in SI: 0.5n H, 2meg A/s, a part of 0.4n H at C1:1."""
    r = _parse(LOOPS + '\n[[part]]\nterminal = "C1:1"\ninductance = "0.4n"\n')
    power, gate = r.loops
    assert power.didt == pytest.approx(2e6) and power.mutual == ()
    (m,) = gate.mutual
    assert (m.loop, m.limit, m.index) == ("power", pytest.approx(0.5e-9), 0)
    (p,) = r.parts
    assert (p.element, p.term, p.inductance) == ("c1", "1", pytest.approx(0.4e-9))


@pytest.mark.parametrize("extra, key", [
    ('mutual = [{loop = "nosuch", limit = "1n"}]', "loop[2].mutual[0].loop"),
    ('mutual = [{loop = "third", limit = "1n"}]', "loop[2].mutual[0].loop"),
    ('mutual = [{loop = "power", limit = "-1n"}]', "loop[2].mutual[0].limit"),
    ('mutual = [{loop = "power"}]', "loop[2].mutual[0]"),
    ('mutual = [{loop = "power", limit = "1n", extra = 1}]', "loop[2].mutual[0].extra"),
    ('mutual = [{loop = "power", limit = "1n"}, {loop = "power", limit = "2n"}]',
     "loop[2].mutual[1].loop"),
    ("didt = 0", "loop[2].didt"),
])
def test_bad_loop_keys_name_the_place(extra: str, key: str) -> None:
    """Unknown or repeated loop names, a non-positive limit or slope, a missing or
    unknown key: a RoutesError with the key path and the line."""
    text = LOOPS + f'\n[[loop]]\nname = "third"\npath = ["A1:1", "A1:2"]\n{extra}\n'
    with pytest.raises(RoutesError) as err:
        _parse(text)
    assert err.value.key == key
    assert err.value.line is not None


def test_bad_parts_name_the_place() -> None:
    for text, key in (('terminal = "C1"\ninductance = "1n"', "part[0].terminal"),
                      ('terminal = "C1:1"', "part[0]"),
                      ('terminal = "C1:1"\ninductance = "abc"', "part[0].inductance")):
        with pytest.raises(RoutesError) as err:
            _parse(f"\n[[part]]\n{text}\n")
        assert err.value.key == key
