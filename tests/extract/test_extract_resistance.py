"""Skin-effect resistance estimate against the exact solution for a round wire."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from geometry.model import Copper, SegmentArrays
from parasite.errors import ExtractionError
from parasite.extract import resistances, skin_depth


def _wire(radius: float, length: float = 1.0) -> SegmentArrays:
    return SegmentArrays(
        start=np.zeros((1, 3)), end=np.array([[0.0, 0.0, length]]),
        width=np.array([2 * radius]), thickness=np.array([2 * radius]),
        round=np.array([True]), radius=np.array([radius]), inner_radius=np.array([0.0]),
        net_index=np.zeros(1, int), node_from=np.zeros(1, int), node_to=np.ones(1, int),
        mirror_z=np.array([np.nan]))


def _exact_ratio(radius: float, delta: float) -> float:
    """R_ac/R_dc of an isolated solid round wire: Re[(k r / 2) J0(k r) / J1(k r)] with
    k = (1 - j)/delta (Ramo, Whinnery & Van Duzer, Fields and Waves in Communication
    Electronics, internal impedance of a round wire; Bessel functions from scipy)."""
    kr = (1 - 1j) * radius / delta
    return float(np.real(kr / 2 * special.jv(0, kr) / special.jv(1, kr)))


@pytest.mark.parametrize("frequency", [1e6, 10e6, 100e6])
def test_round_wire_skin_effect_against_bessel(frequency: float) -> None:
    """The shell estimate pi (r^2 - (r - delta)^2) has the exact high-frequency limit
    R/R_dc = r/(2 delta) + 1/4; for r/delta >= 4 it is within 1% of the exact Bessel
    solution (its remainder is O(delta/r))."""
    copper = Copper()
    delta = skin_depth(copper.resistivity_at_temperature, frequency)
    for r in (4 * delta, 10 * delta, 50 * delta):
        arr = _wire(r)
        ratio = resistances(arr, copper, frequency)[0] / resistances(arr, copper)[0]
        assert ratio == pytest.approx(_exact_ratio(r, delta), rel=0.01, abs=0)


def test_skin_depth_rejects_bad_frequency() -> None:
    """A frequency that is not positive is an input error with the value in the message."""
    with pytest.raises(ExtractionError, match=r"positive frequency.*got -1.0 Hz"):
        skin_depth(1.7241e-8, -1.0)
