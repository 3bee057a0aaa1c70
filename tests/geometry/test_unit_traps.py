"""Unit traps of the routes file: each one warns (file, line, key, what the
value was read as), the numbers keep their SPICE meaning, and no bundled
fixture trips one.

The SPICE reading of scale suffixes is the ngspice manual's (section 2.3,
"Numbers": ``M`` and ``m`` are milli, ``MEG`` is mega, letters after the
number are ignored). The thresholds (a board loop is nanohenries, not above
1 uH; a board is smaller than 1 m) are common practice of board design, from
memory, not from a published table.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from geometry.errors import RoutesError
from geometry.graph import build_graph
from geometry.routes import load_routes, parse_routes
from tests.boards import FIXTURES, ONE_LAYER, TWO_LAYERS, pin, trace

LOOP = '[[loop]]\nname = "hot"\npath = ["C1:1", "M1:d", "M1:s", "C1:2"]\n'


def _routes(text: str, name: str = "board.routes.toml"):
    return parse_routes(text.encode(), name, "toml")


def _line_of(text: str, needle: str) -> int:
    return next(k for k, line in enumerate(text.splitlines(), 1) if needle in line)


@pytest.mark.parametrize("written, read", [("300MHz", 0.3), ("300mhz", 0.3), ("2.5M", 2.5e-3)])
def test_milli_prefix_where_mega_is_plausible_warns(written: str, read: float) -> None:
    """``frequency = "300MHz"`` is 0.3 Hz the SPICE way (ngspice manual 2.3):
    the value stays 0.3 Hz (relative 1e-12: a decimal conversion), and a
    warning names the file, the line, the key and the value as read."""
    text = ONE_LAYER + LOOP + f'frequency = "{written}"\n'
    routes = _routes(text)
    assert routes.loops[0].frequency == pytest.approx(read, rel=1e-12)
    assert len(routes.warnings) == 1
    w = routes.warnings[0]
    line = _line_of(text, "frequency")
    assert w.startswith(f"board.routes.toml:{line}: warning: loop[0].frequency: ")
    assert f"read as {read:g} Hz" in w and "meg" in w


@pytest.mark.parametrize("written", ["300meg", "300MEGHz", "3e8", "100k"])
def test_mega_and_plain_frequencies_do_not_warn(written: str) -> None:
    """``meg`` is mega (ngspice manual 2.3); plain and kilo values are not traps."""
    value = f'"{written}"' if not written[0].isdigit() or not written.isdigit() else written
    routes = _routes(ONE_LAYER + LOOP + f"frequency = {value}\n")
    assert routes.warnings == ()


def test_loop_limit_above_a_microhenry_warns_and_is_kept() -> None:
    """``limit = 1.5`` meant as nanohenries is 1.5 H (a bare number is in the
    base unit, SPICE practice): the limit stays 1.5 H exactly, one warning says
    so on the limit's line; 1.5n and 1 uH exactly do not warn."""
    text = ONE_LAYER + LOOP + "limit = 1.5\n"
    routes = _routes(text)
    assert routes.loops[0].limit == 1.5
    (w,) = routes.warnings
    assert w.startswith(f"board.routes.toml:{_line_of(text, 'limit')}: warning: loop[0].limit: ")
    assert "read as 1.5 H" in w
    for ok in ('"1.5n"', "1e-6", '"1u"'):
        assert _routes(ONE_LAYER + LOOP + f"limit = {ok}\n").warnings == ()


def test_board_larger_than_a_metre_warns() -> None:
    """Millimetre numbers with ``units = "m"``: a 4 m board (coordinates beyond
    10 m are refused outright, geometry/limits.py); the lengths are kept as
    written (4 m), the warning is on the units line; the same board in mm does
    not warn."""
    body = trace("a", [(0.0, 0.0), (4.0, 0.0)], 0.001)
    text = ONE_LAYER.replace('units = "mm"', 'units = "m"') + body
    routes = _routes(text)
    assert routes.traces[0].points[1][0] == 4.0
    (w,) = routes.warnings
    assert w.startswith(f"board.routes.toml:{_line_of(text, 'units')}: warning: units: ")
    assert "4 m" in w and "'m'" in w
    assert _routes(ONE_LAYER + body).warnings == ()


def _via_board(bottom_start: tuple[float, float]) -> str:
    """Top trace from pin R1:1 to a via at (10, 0); a bottom trace from ``bottom_start``
    to (0, 3), meant to be fed by the via."""
    return (TWO_LAYERS + trace("a", [(0.0, 0.0), (10.0, 0.0)], 1.0)
            + trace("a", [bottom_start, (0.0, 3.0)], 1.0, layer="bottom")
            + '[[via]]\nnet = "a"\nat = [10, 0]\nfrom = "top"\nto = "bottom"\ndiameter = 0.4\n\n'
            + pin("R1:1", (0.0, 0.0)))


def test_via_off_the_copper_warns() -> None:
    """A via placed 3 mm off the bottom trace joins the top layer only: one
    warning naming the via's line and where it is; on the trace, none (the
    rule is ours: common practice says a via joins two layers)."""
    text = _via_board((10.0, 3.0))
    graph = build_graph(_routes(text), ["a"])
    dangling = [w for w in graph.warnings if "via joins" in w]
    assert len(dangling) == 1
    assert dangling[0].startswith(f"board.routes.toml:{_line_of(text, '[[via]]')}: warning: via[0]: ")
    assert "'top' only" in dangling[0] and "[10, 0] mm" in dangling[0]
    ok = build_graph(_routes(_via_board((10.0, 0.0))), ["a"])
    assert [w for w in ok.warnings if "via joins" in w] == []


def test_pin_off_the_copper_is_an_error_with_its_line() -> None:
    """A pin end that joins no copper is already an error (not only a warning):
    it names the pin's key and line."""
    text = ONE_LAYER + trace("a", [(0.0, 0.0), (10.0, 0.0)], 1.0) + pin("R1:1", (0.0, 0.0)) + pin(
        "R1:2", (5.0, 4.0))
    with pytest.raises(RoutesError) as err:
        build_graph(_routes(text), ["a", "a"])
    assert err.value.key == "pin[1].at" and err.value.line == _line_of(text, 'terminal = "R1:2"') - 1


def _routes_files() -> list[Path]:
    return sorted(p for p in FIXTURES.rglob("*.routes.*") if "bad" not in p.parts)


def test_no_bundled_fixture_trips_a_trap() -> None:
    """Every bundled routes file reads without a unit-trap warning, and every one
    with a netlist beside it builds without a via joined on one layer only."""
    from parasite.pipeline import load_inputs

    files = _routes_files()
    assert len(files) >= 10
    for path in files:
        assert load_routes(path).warnings == (), path
        cir = path.parent / (path.name.split(".routes")[0] + ".cir")
        if cir.exists():
            graph = load_inputs(str(cir), str(path)).graph
            assert [w for w in graph.warnings if "via joins" in w] == [], path


def test_demo_has_no_warning_at_all() -> None:
    """The bundled demo, as a new user first runs it, prints no warning."""
    from parasite.pipeline import load_inputs
    from tests.boards import DEMO

    assert load_inputs(str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml")).graph.warnings == ()
