"""Ring metrics against the step response of an underdamped second-order system.

Reference: the unit-step response of a second-order system with natural
frequency w_n and damping ratio zeta < 1,

    c(t) = 1 - exp(-zeta w_n t) (cos(w_d t) + zeta / sqrt(1 - zeta^2) sin(w_d t)),
    w_d = w_n sqrt(1 - zeta^2),

with maximum overshoot M_p = exp(-zeta pi / sqrt(1 - zeta^2)): K. Ogata,
*Modern Control Engineering*, 5th ed., Prentice Hall, 2010, section 5-3
(second-order systems, transient-response specifications) -- cited from
memory. The capacitor voltage of a series RLC loop stepped by a source is this
response, with w_n = 1/sqrt(LC) and zeta = (R/2) sqrt(C/L).
"""

from __future__ import annotations

import numpy as np
import pytest

from parasite.errors import MeasurementError
from parasite.ring.edges import find_edges
from parasite.ring.metrics import ring_metrics

F_N = 100e6  # natural frequency of the invented test ring, Hz
V_STEP = 48.0


def step_response(t: np.ndarray, zeta: float, edges: list[tuple[float, int]]) -> np.ndarray:
    wn = 2 * np.pi * F_N
    wd = wn * np.sqrt(1 - zeta**2)
    v = np.zeros_like(t)
    for t_edge, direction in edges:
        tau = t - t_edge
        on = tau > 0
        tau = tau[on]
        c = 1 - np.exp(-zeta * wn * tau) * (
            np.cos(wd * tau) + zeta / np.sqrt(1 - zeta**2) * np.sin(wd * tau)
        )
        v[on] += direction * V_STEP * c
    return v


EDGES = [(0.2e-6, +1), (1.2e-6, -1)]


def half_crossing(zeta: float) -> float:
    """Time from the step to the response's first 50 % crossing (scipy's brentq
    on the closed form; the crossing lies before the first peak)."""
    from scipy.optimize import brentq

    t_peak = np.pi / (2 * np.pi * F_N * np.sqrt(1 - zeta**2))
    return float(
        brentq(lambda x: step_response(np.array([x + 1.0]), zeta, [(1.0, 1)])[0] - 0.5 * V_STEP,
               1e-15, t_peak)
    )


@pytest.mark.parametrize(
    ("zeta", "noise"), [(0.02, 0.02), (0.05, 0.02), (0.1, 0.01), (0.2, 0.005), (0.25, 0.005)]
)
def test_frequency_and_damping_with_noise(zeta: float, noise: float) -> None:
    """Gaussian noise of ``noise`` times the step, sampled at 20 GS/s (200
    samples per ring period), five noise draws each. Required by the issue:
    frequency within 0.5 %, damping ratio within 5 %. The fit's scatter grows
    with damping (fewer cycles above the noise): at zeta = 0.3 with 1 % noise
    its standard deviation is about 0.5 % in frequency (measured over 20
    draws), so heavier damping is tested with less noise."""
    fd = F_N * np.sqrt(1 - zeta**2)
    t = np.arange(0.0, 2e-6, 0.05e-9)
    clean = step_response(t, zeta, EDGES)
    for seed in range(5):
        rng = np.random.default_rng(seed)
        v = clean + rng.normal(0.0, noise * V_STEP, t.size)
        metrics = ring_metrics(t, v)
        assert [m.kind for m in metrics] == ["rising", "falling"]
        for m, (t_edge, direction) in zip(metrics, EDGES, strict=True):
            assert m.edge_time == pytest.approx(t_edge + half_crossing(zeta), abs=0.2e-9)
            assert m.step == pytest.approx(direction * V_STEP, rel=0.01)
            assert m.frequency is not None and m.damping_ratio is not None
            assert m.frequency == pytest.approx(fd, rel=0.005)
            assert m.damping_ratio == pytest.approx(zeta, rel=0.05)
            # logarithmic decrement and damping ratio are one quantity
            delta = 2 * np.pi * zeta / np.sqrt(1 - zeta**2)
            assert m.log_decrement == pytest.approx(delta, rel=0.05)


@pytest.mark.parametrize("zeta", [0.05, 0.2, 0.4])
def test_overshoot_and_settling_without_noise(zeta: float) -> None:
    """Overshoot M_p = exp(-zeta pi / sqrt(1 - zeta^2)) of the step; the
    response stays within the envelope 1 +- exp(-zeta w_n t)/sqrt(1 - zeta^2),
    so the 5 % settling time lies in the half period before the envelope
    reaches 5 % (Ogata, section 5-3)."""
    t = np.arange(0.0, 2e-6, 0.02e-9)
    v = step_response(t, zeta, EDGES)
    metrics = ring_metrics(t, v, band=0.05)
    wn = 2 * np.pi * F_N
    mp = np.exp(-zeta * np.pi / np.sqrt(1 - zeta**2))
    t_env = -np.log(0.05 * np.sqrt(1 - zeta**2)) / (zeta * wn)
    half = 0.5 / (F_N * np.sqrt(1 - zeta**2))
    for m, (t_edge, _) in zip(metrics, EDGES, strict=True):
        assert m.overshoot_ratio == pytest.approx(mp, rel=2e-3)
        assert m.overshoot == pytest.approx(mp * V_STEP, rel=2e-3)
        assert m.band == pytest.approx(0.05 * V_STEP, rel=1e-3)
        assert m.settling_time is not None
        settle_from_step = m.settling_time + (m.edge_time - t_edge)
        assert t_env - half - 0.1e-9 <= settle_from_step <= t_env + 0.1e-9


def test_uneven_time_steps_as_ngspice_writes_them() -> None:
    """The same ring on a jittered, uneven grid (as a simulator's variable
    time step gives) reads the same."""
    rng = np.random.default_rng(7)
    steps = rng.uniform(0.01e-9, 0.08e-9, 60_000)
    t = np.concatenate([[0.0], np.cumsum(steps)])
    t = t[t < 2e-6]
    zeta = 0.1
    m = ring_metrics(t, step_response(t, zeta, EDGES))
    assert len(m) == 2
    assert m[0].frequency == pytest.approx(F_N * np.sqrt(1 - zeta**2), rel=0.002)
    assert m[0].damping_ratio == pytest.approx(zeta, rel=0.02)


def test_large_ring_crossing_the_thresholds_is_one_edge() -> None:
    """zeta = 0.01 rings to 97 % of the step: the crossings of the ring must
    not count as edges."""
    t = np.arange(0.0, 2e-6, 0.05e-9)
    v = step_response(t, 0.01, EDGES)
    edges = find_edges(t, v)
    assert [e.direction for e in edges] == [1, -1]
    for e, (t_edge, _) in zip(edges, EDGES, strict=True):
        assert e.time == pytest.approx(t_edge + half_crossing(0.01), abs=0.05e-9)


def test_overdamped_edge_has_no_ring() -> None:
    """An RC-like edge (first order): no frequency, no damping ratio, no overshoot."""
    t = np.arange(0.0, 2e-6, 0.1e-9)
    v = np.where(t > 0.5e-6, 12.0 * (1 - np.exp(-(t - 0.5e-6) / 20e-9)), 0.0)
    (m,) = ring_metrics(t, v)
    assert m.frequency is None and m.damping_ratio is None
    assert m.overshoot == pytest.approx(0.0, abs=1e-9)
    # first order: within 5 % after 3 time constants from the step (e^-3 = 0.0498)
    assert m.settling_time is not None
    assert m.settling_time + (m.edge_time - 0.5e-6) == pytest.approx(3 * 20e-9, abs=0.3e-9)


def test_flat_waveform_is_refused() -> None:
    rng = np.random.default_rng(3)
    t = np.arange(0.0, 1e-6, 1e-9)
    v = 12.0 + rng.normal(0.0, 0.05, t.size)
    with pytest.raises(MeasurementError, match=r"flat\.csv: error: no switching edge"):
        ring_metrics(t, v, name="flat.csv")
