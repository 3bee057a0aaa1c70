"""Ring metrics on synthetic switching edges with known answers.

Each waveform is built here from closed forms: a linear ramp of the step
(50 % crossing at ``T_EDGE``), a large first lobe (a half sine of height
``lobe`` right after the ramp, as a switching transition leaves it), then the
free ring

    x(tau) = -A exp(-alpha tau) sin(omega_d tau),   alpha = zeta omega_n,
    omega_d = omega_n sqrt(1 - zeta^2),

the free response of an underdamped second-order system (K. Ogata, *Modern
Control Engineering*, 5th ed., 2010, section 5-3 -- cited from memory; the
damping ratio/decay relation also in Thomson & Dahleh, *Theory of Vibration
with Applications*, section 2.6). Optional: a slow slope, a second mode,
Gaussian noise, and few samples per ring period.

Analytic settling time (derivation): |x(tau)| <= A exp(-alpha tau), and the
peaks of |x| touch the envelope (to within a factor sqrt(1 - zeta^2) ~ 1 for
light damping) every half period T_d/2. The waveform last leaves the band
+-b (b = 5 % of the step) at the last peak above b, which lies within the
half period before the envelope meets b, at tau_e = ln(A / b) / alpha.
Measured from the 50 % crossing, settling = (ring start - T_EDGE) + tau_e
within T_d/2, and the samples can miss a peak by up to another half period:
the issue's tolerance, one ring period, covers both.

Tolerances are the issue's: frequency within 1 %, damping ratio within 10 %,
settling within one ring period; where sampling cannot support a number, a
stated reason instead.
"""

from __future__ import annotations

import re

import numpy as np
import pytest

from parasite.ring.metrics import ring_metrics

STEP = 48.0  # V
T_EDGE = 100e-9  # s, the 50 % crossing of the rising edge
RAMP = 2e-9  # s, 0-100 % rise time of the ramp
T_FALL = 600e-9  # s, a falling edge later (so the ring has a window that ends)


def waveform(
    *, f: float, zeta: float, amp: float, lobe: float, spp: float, noise: float = 0.0,
    slope: float = 0.0, second: tuple[float, float, float] | None = None, seed: int = 0,
    t_end: float = 1.2e-6, t_fall: float | None = T_FALL, t_start: float = 0.0,
) -> tuple[np.ndarray, np.ndarray, float]:
    """Samples (t, v) at ``spp`` samples per ring period and the ring's start
    time (s). ``slope`` V/s after the edge; ``second`` = (f, zeta, amplitude)
    of a second mode. A falling ramp at ``t_fall`` returns to 0 V."""
    dt = 1.0 / (f * spp)
    t = np.arange(t_start, t_end, dt) + 0.37 * dt  # samples not aligned with the edge
    v = STEP * np.clip((t - T_EDGE) / RAMP + 0.5, 0.0, 1.0)
    t1 = T_EDGE + RAMP / 2
    width = 0.5 / f  # the lobe lasts half a ring period
    on = (t > t1) & (t < t1 + width)
    v[on] += lobe * np.sin(np.pi * (t[on] - t1) / width)
    t_ring = t1 + width
    tau = t - t_ring
    after = tau > 0
    if t_fall is not None:
        after &= t < t_fall
    wn = 2 * np.pi * f / np.sqrt(1 - zeta**2)
    v[after] += -amp * np.exp(-zeta * wn * tau[after]) * np.sin(2 * np.pi * f * tau[after])
    if second is not None:
        f2, z2, a2 = second
        wn2 = 2 * np.pi * f2 / np.sqrt(1 - z2**2)
        v[after] += a2 * np.exp(-z2 * wn2 * tau[after]) * np.sin(2 * np.pi * f2 * tau[after])
    if slope:
        v[after] += slope * tau[after]
    if t_fall is not None:
        v = np.where(t >= t_fall - RAMP / 2,
                     STEP * np.clip(1.0 - ((t - t_fall) / RAMP + 0.5), 0.0, 1.0), v)
    if noise:
        v = v + np.random.default_rng(seed).normal(0.0, noise, t.size)
    return t, v, t_ring


def rising(t: np.ndarray, v: np.ndarray):  # type: ignore[no-untyped-def]
    edges = ring_metrics(t, v, resample=False)
    up = [m for m in edges if m.direction > 0]
    assert len(up) == 1, [m.kind for m in edges]
    return up[0]


@pytest.mark.parametrize("spp", [4.0, 5.0, 7.0, 10.0, 50.0])
@pytest.mark.parametrize("noise", [0.0, 0.1])
def test_long_weak_ring_after_a_big_first_lobe(spp: float, noise: float) -> None:
    """250 MHz, zeta = 0.01, 2 V ring after an 8 V first lobe (the issue's
    misread case), 0 or 0.1 V rms noise, 4 to 50 samples per period."""
    f, zeta = 250e6, 0.01
    t, v, _ = waveform(f=f, zeta=zeta, amp=2.0, lobe=8.0, spp=spp, noise=noise)
    m = rising(t, v)
    assert m.ring_reason is None
    assert m.frequency == pytest.approx(f, rel=0.01)
    assert m.damping_ratio == pytest.approx(zeta, rel=0.10)
    assert m.ring_amplitude is not None and m.ring_amplitude < 0.5 * m.overshoot


@pytest.mark.parametrize("spp", [4.0, 10.0])
def test_ring_on_a_slow_slope(spp: float) -> None:
    """The same kind of ring riding on a slope of 20 V/us (a node pulled by an
    inductor current), 0.05 V noise."""
    f, zeta = 100e6, 0.03
    t, v, _ = waveform(f=f, zeta=zeta, amp=5.0, lobe=10.0, spp=spp, noise=0.05, slope=20e6)
    m = rising(t, v)
    assert m.frequency == pytest.approx(f, rel=0.01)
    assert m.damping_ratio == pytest.approx(zeta, rel=0.10)


@pytest.mark.parametrize("spp", [6.0, 20.0])
def test_ring_with_two_modes(spp: float) -> None:
    """A 200 MHz ring (zeta 0.02, 4 V) with a 37 MHz mode (zeta 0.05, 1.5 V)
    beside it; the reported ring is the stronger one, the other is kept as
    the second mode (both within the issue's tolerances)."""
    f, zeta = 200e6, 0.02
    t, v, _ = waveform(f=f, zeta=zeta, amp=4.0, lobe=6.0, spp=spp, noise=0.03,
                       second=(37e6, 0.05, 1.5))
    m = rising(t, v)
    assert m.frequency == pytest.approx(f, rel=0.01)
    assert m.damping_ratio == pytest.approx(zeta, rel=0.10)
    assert m.fit is not None and m.fit.second is not None
    assert m.fit.second.frequency == pytest.approx(37e6, rel=0.01)
    assert m.fit.second.damping_ratio == pytest.approx(0.05, rel=0.10)


@pytest.mark.parametrize("spp", [4.0, 8.0, 40.0])
def test_settling_time_against_the_envelope(spp: float) -> None:
    """6 V ring at 250 MHz, zeta 0.01, after a 9 V lobe: the 5 % band (2.4 V)
    is left for the last time within one ring period of
    (ring start - edge) + ln(A / b) / alpha (module notes)."""
    f, zeta, amp = 250e6, 0.01, 6.0
    t, v, t_ring = waveform(f=f, zeta=zeta, amp=amp, lobe=9.0, spp=spp)
    m = rising(t, v)
    alpha = zeta * 2 * np.pi * f / np.sqrt(1 - zeta**2)
    expected = (t_ring - T_EDGE) + np.log(amp / (0.05 * STEP)) / alpha
    assert m.settling_time is not None and m.settling_reason is None
    assert abs(m.settling_time - expected) <= 1.0 / f


def test_not_settled_says_why() -> None:
    """A ring that stays above the band until the next edge: no settling time,
    and the reason names the band in volts (2.4 V = 5 % of 48 V)."""
    t, v, _ = waveform(f=250e6, zeta=0.001, amp=6.0, lobe=9.0, spp=10)
    m = rising(t, v)
    assert m.settling_time is None
    assert m.settling_reason is not None
    assert re.search(r"\+-2\.4\d* V", m.settling_reason), m.settling_reason


def test_too_few_samples_per_period_says_why() -> None:
    """2.5 samples per period (below the 3 the fit needs; Nyquist is 2): no
    frequency, and the reason says how many samples per period there are."""
    t, v, _ = waveform(f=250e6, zeta=0.01, amp=4.0, lobe=8.0, spp=2.5)
    m = rising(t, v)
    assert m.frequency is None and m.damping_ratio is None
    assert m.ring_reason is not None and "too few samples per ring period (2.5" in m.ring_reason


def test_no_ring_above_the_noise_says_why() -> None:
    """A 0.05 V ring under 0.5 V rms noise (after a 5 V lobe): no ring reported,
    and the reason says it is not above the noise."""
    t, v, _ = waveform(f=100e6, zeta=0.02, amp=0.05, lobe=5.0, spp=20, noise=0.5)
    m = rising(t, v)
    assert m.frequency is None
    assert m.ring_reason is not None and "noise" in m.ring_reason


def test_window_too_short_says_why() -> None:
    """The record ends 16 ns after the edge: the 100 MHz ring has less than
    the 1.5 periods after the first lobe that the fit needs."""
    t, v, _ = waveform(f=100e6, zeta=0.02, amp=4.0, lobe=4.0, spp=50, t_fall=None,
                       t_start=70e-9, t_end=T_EDGE + 16e-9)
    m = rising(t, v)
    assert m.frequency is None
    assert m.ring_reason is not None and "window too short" in m.ring_reason


def test_reasons_are_in_the_json() -> None:
    """The JSON of an edge carries the reasons next to the empty numbers."""
    t, v, _ = waveform(f=250e6, zeta=0.01, amp=4.0, lobe=8.0, spp=2.5)
    d = rising(t, v).to_dict()
    assert d["frequency"] is None and "samples per ring period" in d["ring_reason"]


@pytest.mark.parametrize("seed", range(4))
def test_first_order_edges_in_noise_have_no_ring(seed: int) -> None:
    """An RC edge (tau = 20 ns, 12 V) and an abrupt fall, 0.1 V rms noise,
    2.5 GS/s: white noise has no spectral peak that stands out (its largest
    bin is about 3-4x the median, Rayleigh statistics), so no ring is
    reported and the reason says so."""
    t = np.arange(0.0, 2e-6, 0.4e-9)
    v = np.where(t > 0.5e-6, 12.0 * (1 - np.exp(-(t - 0.5e-6) / 20e-9)), 0.0)
    v = np.where(t > 1.5e-6, 0.0, v) + np.random.default_rng(seed).normal(0, 0.1, t.size)
    for m in ring_metrics(t, v, resample=False):
        assert m.frequency is None
        assert m.ring_reason is not None and "noise" in m.ring_reason
