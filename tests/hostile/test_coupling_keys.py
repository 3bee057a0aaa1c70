"""Hostile values in the coupling keys (``[[part]]``, a loop's ``mutual`` and
``didt``, ``plot --height``): the same clean errors as every other number of
the routes file (issue 19's policy, docs/routes-file.md "Limits": finite, of
magnitude between 1e-30 and 1e30; common practice, far above any real board).
Exit 1 naming the file, line and key path, or 2 for an option; nothing written."""

from __future__ import annotations

import pytest

from tests.hostile.helpers import BOARD_CIR, board_routes, put, run_cli

_LOOPS = ('[[loop]]\nname = "a"\npath = ["V1:p", "R1:1", "R1:2", "R2:1", "R2:2", "V1:n"]\n'
          '{a_extra}\n'
          '[[loop]]\nname = "b"\npath = ["R2:1", "R2:2", "R2:1"]\n')


def _augment(tmp_path, extra):
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes(extra))
    return run_cli(tmp_path, "augment", "b.cir", "b.routes.toml", "-o", "out.cir", "-q")


@pytest.mark.parametrize("extra, key", [
    ('[[part]]\nterminal = "R1:1"\ninductance = 1e308\n', "part[0].inductance"),
    ('[[part]]\nterminal = "R1:1"\ninductance = 1e-320\n', "part[0].inductance"),
    ('[[part]]\nterminal = "R1:1"\ninductance = nan\n', "part[0].inductance"),
    ('[[part]]\nterminal = "R1:1"\ninductance = -1e-9\n', "part[0].inductance"),
    (_LOOPS.format(a_extra="didt = inf"), "loop[0].didt"),
    (_LOOPS.format(a_extra="didt = 1e300"), "loop[0].didt"),
    (_LOOPS.format(a_extra='mutual = [{ loop = "b", limit = 1e-300 }]'),
     "loop[0].mutual[0].limit"),
])
def test_hostile_coupling_values_are_refused(tmp_path, extra, key):
    r = _augment(tmp_path, extra)
    assert r.code == 1, r.stderr
    assert r.stderr.startswith("b.routes.toml:") and key in r.stderr
    assert not r.written


def test_a_sane_part_is_accepted(tmp_path):
    """Control: the same file with a plausible ESL runs, so the refusals above
    come from the hostile value alone."""
    r = _augment(tmp_path, '[[part]]\nterminal = "R1:1"\ninductance = "0.5n"\n')
    assert r.code == 0, r.stderr
    assert r.written == {"out.cir"}


@pytest.mark.parametrize("height", ["1e308", "nan", "11"])
def test_plot_height_out_of_range_is_a_usage_error(tmp_path, height):
    """--height above 10 m (geometry.limits.MAX_LENGTH_M) or not finite: exit 2."""
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes(_LOOPS.format(a_extra="")))
    r = run_cli(tmp_path, "plot", "b.cir", "b.routes.toml", "-o", "f.png", "-q",
                "--field", "a", "--height", height)
    assert r.code == 2, r.stderr
    assert "--height" in r.stderr and not r.written
