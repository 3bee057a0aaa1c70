"""The damping budget of ``parasite ring``: how much of a measured ring's series
resistance the simulation explains, and what is missing."""

from __future__ import annotations

import math

import pytest

from parasite.ring.budget import budget_lines, damping_budget
from parasite.ring.fit import series_rlc_from_ring


def _entry(source: str, zeta: float) -> dict:
    fit = series_rlc_from_ring(150e6, zeta, 400e-12)
    return {"source": source, "direction": "rising", **fit.to_dict()}


def test_budget_follows_the_series_rlc_formula() -> None:
    """Two rings at the same damped frequency f_d and capacitance C: for a series RLC,
    w0 = 2 pi f_d / sqrt(1 - zeta^2) and R = 2 zeta / (w0 C) (textbook second-order
    circuit, e.g. Nilsson and Riedel, *Electric Circuits*, natural response of a series
    RLC; from memory), so the explained fraction is
    (zeta_s / zeta_m) sqrt(1 - zeta_s^2) / sqrt(1 - zeta_m^2); to 1e-12."""
    zm, zs = 0.08, 0.02
    b = damping_budget([_entry("measured edge 1", zm), _entry("augmented simulation", zs)])
    assert len(b) == 1
    expected = (zs / zm) * math.sqrt(1 - zs**2) / math.sqrt(1 - zm**2)
    assert b[0]["explained_fraction"] == pytest.approx(expected, rel=1e-12)
    w0 = 2 * math.pi * 150e6 / math.sqrt(1 - zm**2)
    rm = 2 * zm / (w0 * 400e-12)
    assert b[0]["measured_resistance"] == pytest.approx(rm, rel=1e-12)
    assert b[0]["missing_resistance"] == pytest.approx(rm * (1 - expected), rel=1e-9)
    text = "\n".join(budget_lines(b, "broadband R-L ladders"))
    assert "25 % explained" in text and "broadband" in text


def test_no_budget_without_both_rings() -> None:
    """Only a measured ring (no simulated one of that direction): no entry."""
    assert damping_budget([_entry("measured edge 1", 0.05)]) == []
