"""The report as a designer reads it: the largest terms of a loop ranked by
magnitude with their sign (a cancelling term is what one wants to see), and the
loop's two resistances side by side (skin-effect estimate at the loop's
frequency, and what the netlist's DC R cards give).

Board: the 40 x 20 mm rectangle of 1 mm x 35 um traces of
tests/loops/test_loops_pipeline.py (invented test scenario); every segment
carries the 1 A loop current (the copper is a tree).
"""

from __future__ import annotations

import math

import pytest

from parasite.augment import augment_text
from parasite.report import report_text
from tests.loops.test_loops_pipeline import RECT_NET, rect_routes
from tests.reference import mutual_parallel_spans

RHO = 1.7241e-8  # ohm*m: annealed copper at 20 degC, IEC 60028 (the default resistivity)


def _report(extra: str = "") -> dict:
    return augment_text(RECT_NET, rect_routes() + extra, routes_name="rect.routes.toml").report


def test_a_cancelling_pair_term_ranks_by_its_size_and_shows_its_sign() -> None:
    """The bottom side (39.5 mm, current toward -x) under the top pieces (+x)
    20 mm away gives the largest pair term, negative: -2 M with M from
    Neumann's formula for parallel filaments (Grover 1946, ch. 5; filaments
    for 1 mm traces 20 mm apart: within 1%, the GMD of two such strips is
    their distance to 0.1%). The collinear top pieces give the one positive
    term, smaller in size and listed after it. The text shows the sign."""
    report = _report()
    (loop,) = report["loops"]
    pairs = loop["pair_contributors"]
    sizes = [abs(p["inductance"]) for p in pairs]
    assert sizes == sorted(sizes, reverse=True)
    m_a = mutual_parallel_spans(0.0, 0.01975, 0.0005, 0.040, 0.020)  # top piece of net a
    m_b = mutual_parallel_spans(0.02025, 0.040, 0.0005, 0.040, 0.020)  # top piece of net b
    assert pairs[0]["inductance"] < 0
    assert -pairs[0]["inductance"] == pytest.approx(2 * max(m_a, m_b), rel=0.01)
    positive = [p for p in pairs if p["inductance"] > 0]
    assert len(positive) == 1 and pairs.index(positive[0]) > 0
    text = report_text(report)
    mutual_rows = [ln for ln in text.splitlines() if ln.endswith("mutual")]
    assert mutual_rows[0].split()[3].startswith("-")  # "a + b  -xx pH  -n%  mutual"
    assert any(row.split()[3].startswith("+") for row in mutual_rows)
    assert "by magnitude, signed" in text


def test_loop_resistances_side_by_side() -> None:
    """At 100 MHz: ``netlist_resistance`` is the DC resistance of the copper the
    loop current runs through, rho l / (w t) with l = 118.5 mm of centre line
    (R = rho l / A, textbook; 1e-6 relative: only the joins' rounding), and
    ``resistance`` is the skin-effect estimate, well above it (the skin depth
    sqrt(rho / (pi f mu0)) = 6.6 um at 100 MHz, textbook, against a 35 um
    foil: at least twice the DC value). Without a frequency the two agree.
    The text table names both, with its legend."""
    report = _report('frequency = "100meg"\n')
    (loop,) = report["loops"]
    r_dc = RHO * 0.1185 / (1e-3 * 35e-6)
    assert loop["netlist_resistance"] == pytest.approx(r_dc, rel=1e-6)
    delta = math.sqrt(RHO / (math.pi * 1e8 * 4e-7 * math.pi))
    assert delta == pytest.approx(6.6e-6, rel=0.01)
    assert loop["resistance"] > 2 * loop["netlist_resistance"]
    text = report_text(report)
    header = next(ln for ln in text.splitlines() if ln.startswith("loop "))
    assert "resistance at f" in header and "netlist R" in header
    assert "skin-effect estimate" in text and "DC values" in text
    (dc,) = _report()["loops"]
    assert dc["resistance"] == pytest.approx(dc["netlist_resistance"], rel=1e-12)
    assert dc["netlist_resistance"] == pytest.approx(r_dc, rel=1e-6)
