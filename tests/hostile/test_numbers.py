"""Hostile numbers in the routes file and on the command line (issue 19):
each reproducer must end in a clean error naming the file and the place, exit
1 (input) or 2 (command line), nothing written. The physical ranges are those
of docs/routes-file.md "Limits" (common practice: far above any real board)."""

from __future__ import annotations

import json

import pytest

from tests.hostile.helpers import BOARD_CIR, board_routes, put, run_cli


def _augment(tmp_path, routes_text, *opts, name="b.routes.toml"):
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, name, routes_text)
    return run_cli(tmp_path, "augment", "b.cir", name, "-o", "out.cir", "-q", *opts)


def test_the_board_itself_is_accepted(tmp_path):
    """Control: the unmodified board runs (exit 0), so the errors below come
    from the hostile value alone."""
    r = _augment(tmp_path, board_routes())
    assert r.code == 0, r.stderr
    assert r.written == {"out.cir"}


@pytest.mark.parametrize("value, key", [
    ("1" + "0" * 300, "layers.top.z"),           # OverflowError in float()
    ("1" + "0" * 5000, None),                    # beyond Python's int digit limit (the TOML
                                                 # reader's own error: line only)
    ("1e308", "layers.top.z"),                   # finite but no board is that tall
])
def test_huge_numbers_are_refused_with_the_line(tmp_path, value, key):
    text = board_routes().replace("z = 1.565", f"z = {value}")
    line = text.splitlines().index(f"z = {value}") + 1
    r = _augment(tmp_path, text)
    assert r.code == 1, r.stderr
    assert r.stderr.startswith(f"b.routes.toml:{line}: error: ")
    if key is not None:
        assert key in r.stderr
    assert not r.written


def test_point_at_1e308_is_refused(tmp_path):
    r = _augment(tmp_path, board_routes(point="[1e308, 0], [10, 0]"))
    assert r.code == 1 and "trace[0].points[0]" in r.stderr and not r.written


def test_snap_that_becomes_zero_is_refused(tmp_path):
    r = _augment(tmp_path, board_routes(snap="5e-324"))
    assert r.code == 1 and "snap" in r.stderr and not r.written


def test_probe_lead_radius_of_1e_300_is_refused(tmp_path):
    probe = ('[[probe]]\nname = "p"\ntip = { layer = "top", at = [5, 0] }\n'
             'ground = { layer = "gnd", at = [6, 0] }\n'
             'tip_lead = { points = [[5, 0, 1.6], [5, 0, 10]], radius = 1e-300 }\n'
             'ground_lead = { points = [[6, 0, 1.6], [6, 0, 10]], radius = 0.2 }\n'
             'instrument = "10x"\n')
    r = _augment(tmp_path, board_routes(probe))
    assert r.code == 1 and "radius" in r.stderr and not r.written


def test_probe_whose_contacts_and_leads_coincide_is_clean(tmp_path):
    """Tip, ground and leads at one place: a clean result or a clean error."""
    probe = ('[[probe]]\nname = "p"\ntip = { layer = "top", at = [5, 0] }\n'
             'ground = { layer = "top", at = [5, 0] }\n'
             'tip_lead = { points = [[5, 0, 1.6], [5, 0, 10]], radius = 0.2 }\n'
             'ground_lead = { points = [[5, 0, 1.6], [5, 0, 10]], radius = 0.2 }\n'
             'instrument = "10x"\n')
    r = _augment(tmp_path, board_routes(probe))
    assert r.code in (0, 1)
    if r.code == 1:
        assert "b.routes.toml" in r.stderr and not r.written


@pytest.mark.parametrize("opts", [
    ("--frequency", "5e-324"), ("--frequency", "1e308"), ("--frequency", "nan"),
    ("--frequency", "inf"), ("--min-coupling", "nan"), ("--min-coupling", "-0.5"),
])
def test_out_of_range_options_are_usage_errors(tmp_path, opts):
    r = _augment(tmp_path, board_routes(), *opts)
    assert r.code == 2, r.stderr
    assert opts[0] in r.stderr and not r.written


def test_report_with_a_high_but_valid_frequency_is_finite(tmp_path):
    """1 THz is the top of the accepted range: every number written is finite
    (the JSON parser of the standard library refuses NaN with parse_constant)."""
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes())
    r = run_cli(tmp_path, "report", "b.cir", "b.routes.toml", "--format", "json", "-q",
                "--frequency", "1e12", "-o", "r.json")
    assert r.code == 0, r.stderr

    def bad(c):
        raise AssertionError(f"non-finite {c} in the report")
    json.loads((tmp_path / "r.json").read_text(), parse_constant=bad)
    r = run_cli(tmp_path, "report", "b.cir", "b.routes.toml", "-q", "--frequency", "1e12",
                "-o", "r.txt")
    assert r.code == 0, r.stderr
    r = _augment(tmp_path, board_routes(), "--frequency", "1e12")
    assert r.code == 0
    assert "inf" not in (tmp_path / "out.cir").read_text().lower().split()


def test_unicode_digit_in_a_terminal_is_clean(tmp_path):
    text = board_routes().replace('"R1:1"', '"R1:\u00b9"')
    r = _augment(tmp_path, text)
    assert r.code == 1 and "b.routes.toml" in r.stderr and not r.written


def test_toml_error_at_end_of_document_names_a_line(tmp_path):
    r = _augment(tmp_path, board_routes() + '[[pin]]\nterminal = "')
    assert r.code == 1 and not r.written
    assert r.stderr.startswith("b.routes.toml:") and r.stderr.split(":")[1].strip().isdigit()


def test_a_non_finite_self_term_names_the_piece(tmp_path):
    """The check behind "the inductance matrix has a non-positive or non-finite
    self term": with the board's own extraction and one self term made NaN, the
    error names the routes entry (key path and line) of that piece."""
    import numpy as np

    from parasite.errors import ExtractionError
    from parasite.pipeline import check_finite, extract, load_inputs

    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes())
    inputs = load_inputs(str(tmp_path / "b.cir"), str(tmp_path / "b.routes.toml"))
    ex = extract(inputs)
    L = ex.L.copy()
    L[0, 0] = np.nan
    with pytest.raises(ExtractionError) as err:
        check_finite(inputs, L, ex.R)
    text = str(err.value)
    assert "trace[0]" in text and "b.routes.toml:" in text
    line = int(text.split("b.routes.toml:")[1].split(":")[0])
    assert (tmp_path / "b.routes.toml").read_text().splitlines()[line - 1].startswith("[[trace]]")


@pytest.mark.parametrize("args", [
    ("ring", "b.cir", "b.routes.toml", "--node", "a", "--band", "nan"),
    ("ring", "b.cir", "b.routes.toml", "--node", "a", "--timeout", "nan"),
    ("import", "board.kicad_pcb", "--arc-tolerance", "nan", "-o", "x.routes.toml"),
    ("import", "board.kicad_pcb", "--plating", "inf", "-o", "x.routes.toml"),
])
def test_nan_in_other_commands_options_is_a_usage_error(tmp_path, args):
    """click's FloatRange lets NaN through (every comparison with NaN is
    false); these options now refuse it as a wrong command line (exit 2)."""
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes())
    put(tmp_path, "board.kicad_pcb", "(kicad_pcb)\n")
    r = run_cli(tmp_path, *args)
    assert r.code == 2, r.stderr
    assert not r.written


def test_a_singular_matrix_error_names_the_routes_file(tmp_path):
    """Found by the fuzz suite: one via written twice at one place made the
    matrix singular, and the error named no file ('<input>')."""
    via = ('[[via]]\nnet = "0"\nat = [30, 0]\nfrom = "top"\nto = "gnd"\ndiameter = 0.3\n\n')
    r = _augment(tmp_path, board_routes(via + via))
    assert r.code in (0, 1)
    if r.code == 1:
        assert r.stderr.startswith("b.routes.toml") and not r.written
