"""Ringing metrics of each switching edge: frequency, damping, overshoot, settling.

After an edge, the node settles to its new level through a damped oscillation

    x(tau) = A exp(-alpha tau) cos(omega_d tau + phi) + c,

the free response of a second-order system (a series RLC loop). From it:

* ring frequency f_d = omega_d / (2 pi), in Hz;
* logarithmic decrement delta = ln(x_n / x_(n+1)) over one period
  = alpha T_d = 2 pi alpha / omega_d, and the damping ratio
  zeta = delta / sqrt(4 pi^2 + delta^2) (equivalently alpha / sqrt(alpha^2 +
  omega_d^2)). W. T. Thomson, M. D. Dahleh, *Theory of Vibration with
  Applications*, 5th ed., Prentice Hall, 1998, section 2.6 (logarithmic
  decrement), eq. 2.6-3 -- cited from memory.

Method: the extrema of the ring (found between zero crossings of x with a
hysteresis of a few noise deviations) give first estimates: the extrema of a
damped sinusoid are spaced by exactly half a period, and the ratio of
successive extrema gives the decrement. A least-squares fit of the model above
over the ring (variable projection: A, phi and c solved linearly for each
trial alpha, omega_d) then refines both; with noise this is far steadier than
reading single peaks.

* peak overshoot: how far the waveform goes past its final level, in V and as
  a fraction of the step;
* settling time: from the edge's 50 % crossing until the waveform stays within
  +-band of the final level (the band is a fraction of the step, stated with
  the result). Measured on the samples as they are, so noise larger than the
  band means "not settled".

The final level is the median of the last 40 % of the time before the next
edge; the initial level is the previous edge's final level (for the first
edge, the median of the last 40 % before it).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from parasite.ring.edges import Edge, _noise_sigma, find_edges, uniform

DEFAULT_BAND = 0.05
"""Default settling band: +-5 % of the step (common practice)."""


@dataclass(frozen=True)
class RingMetrics:
    """Metrics of the ring after one edge. SI units: s, V, Hz.

    ``frequency``, ``damping_ratio`` and ``log_decrement`` are ``None`` when
    fewer than two extrema of the ring rise above the noise (no ringing seen);
    ``settling_time`` is ``None`` when the waveform has not settled into the
    band before the next edge (or the end of the record).
    """

    edge_time: float
    direction: int
    initial: float
    final: float
    step: float
    peak: float
    overshoot: float
    overshoot_ratio: float
    frequency: float | None
    damping_ratio: float | None
    log_decrement: float | None
    settling_time: float | None
    band: float
    band_fraction: float
    extrema: int

    @property
    def kind(self) -> str:
        return "rising" if self.direction > 0 else "falling"

    def to_dict(self) -> dict[str, Any]:
        return {
            "edge_time": self.edge_time,
            "direction": self.kind,
            "initial": self.initial,
            "final": self.final,
            "step": self.step,
            "peak": self.peak,
            "overshoot": self.overshoot,
            "overshoot_ratio": self.overshoot_ratio,
            "frequency": self.frequency,
            "damping_ratio": self.damping_ratio,
            "log_decrement": self.log_decrement,
            "settling_time": self.settling_time,
            "settling_band": self.band,
            "settling_band_fraction": self.band_fraction,
            "extrema": self.extrema,
        }


@dataclass(frozen=True)
class DampedSine:
    """Fitted free response: x = amplitude exp(-alpha tau) cos(omega tau + phase)
    + offset, tau measured from ``t0`` (s). alpha in 1/s, omega in rad/s."""

    t0: float
    alpha: float
    omega: float
    amplitude: float
    phase: float
    offset: float

    @property
    def frequency(self) -> float:
        return self.omega / (2 * np.pi)

    @property
    def log_decrement(self) -> float:
        return 2 * np.pi * self.alpha / self.omega

    @property
    def damping_ratio(self) -> float:
        return float(self.alpha / np.hypot(self.alpha, self.omega))

    def __call__(self, t: np.ndarray) -> np.ndarray:
        tau = np.asarray(t) - self.t0
        return self.amplitude * np.exp(-self.alpha * tau) * np.cos(
            self.omega * tau + self.phase
        ) + self.offset


def ring_metrics(
    t: np.ndarray,
    v: np.ndarray,
    *,
    band: float = DEFAULT_BAND,
    name: str = "<waveform>",
    resample: bool = True,
) -> list[RingMetrics]:
    """Metrics of every switching edge of ``v(t)`` (V against s).

    ``band`` is the settling band as a fraction of each edge's step. The
    waveform is first put on an even time grid (``resample``) since ngspice's
    steps are uneven. Raises :class:`~parasite.errors.MeasurementError` when
    the waveform has no two levels.
    """
    if resample:
        t, v = uniform(t, v)
    else:
        t = np.asarray(t, dtype=float)
        v = np.asarray(v, dtype=float)
    edges = find_edges(t, v, name=name)
    out: list[RingMetrics] = []
    previous_final: float | None = None
    for k, edge in enumerate(edges):
        if k + 1 < len(edges):
            nxt = edges[k + 1]
            # stop before the next transition begins: back off three times the
            # samples it took from the threshold to 50 %
            end = nxt.start - 3 * (nxt.index - nxt.start) - 2
        else:
            end = len(t) - 1
        if previous_final is None:
            a = 0 if k == 0 else edges[k - 1].index
            initial = _plateau(v, a, edge.start)
        else:
            initial = previous_final
        m = edge_metrics(t, v, edge, end, initial=initial, band=band)
        if m is None:
            previous_final = None
            continue
        out.append(m)
        previous_final = m.final
    return out


def _plateau(v: np.ndarray, a: int, b: int) -> float:
    """Median of the last 40 % of v[a:b+1]."""
    b = max(b, a)
    n = b - a + 1
    first = a + int(0.6 * n)
    return float(np.median(v[first : b + 1]))


def edge_metrics(
    t: np.ndarray,
    v: np.ndarray,
    edge: Edge,
    end: int,
    *,
    initial: float,
    band: float = DEFAULT_BAND,
) -> RingMetrics | None:
    """Metrics of the ring that follows ``edge``, up to sample ``end``, on an
    even grid ``t``. ``None`` when fewer than 8 samples follow the edge."""
    i0 = edge.index
    if end - i0 < 8:
        return None
    final = _plateau(v, i0, end)
    step = final - initial
    d = 1 if step >= 0 else -1
    x = (v[i0 : end + 1] - final) * d
    ts = t[i0 : end + 1]
    ip = int(np.argmax(x))
    peak = float(v[i0 + ip])
    overshoot = max(float(x[ip]), 0.0)
    mag = abs(step) if step != 0 else 1.0
    tail = x[int(0.6 * len(x)) :]
    sigma = _noise_sigma(tail)
    fit = fit_ring(ts[ip:], x[ip:], sigma=sigma, scale=mag)
    band_v = band * abs(step)
    outside = np.flatnonzero(np.abs(v[i0 : end + 1] - final) > band_v)
    settling: float | None
    if outside.size == 0:
        settling = max(float(ts[0] - edge.time), 0.0)
    elif outside[-1] >= len(x) - 1 - max(2, len(x) // 50):
        settling = None
    else:
        settling = float(ts[outside[-1] + 1] - edge.time)
    return RingMetrics(
        edge_time=edge.time,
        direction=d,
        initial=initial,
        final=final,
        step=step,
        peak=peak,
        overshoot=overshoot,
        overshoot_ratio=overshoot / mag,
        frequency=None if fit is None else fit[0].frequency,
        damping_ratio=None if fit is None else fit[0].damping_ratio,
        log_decrement=None if fit is None else fit[0].log_decrement,
        settling_time=settling,
        band=band_v,
        band_fraction=band,
        extrema=0 if fit is None else fit[1],
    )


def ring_extrema(x: np.ndarray, hysteresis: float) -> list[int]:
    """Indices of the alternating extrema of ``x`` (a ring about 0): the largest
    |x| in each run between crossings of +-``hysteresis``."""
    state = np.where(x > hysteresis, 1, np.where(x < -hysteresis, -1, 0))
    armed = np.flatnonzero(state)
    if armed.size == 0:
        return []
    s = state[armed]
    bounds = np.concatenate([[0], np.flatnonzero(s[1:] != s[:-1]) + 1, [armed.size]])
    out: list[int] = []
    for a, b in zip(bounds[:-1], bounds[1:], strict=True):
        lo, hi = int(armed[a]), int(armed[b - 1])
        run = np.abs(x[lo : hi + 1])
        out.append(lo + int(np.argmax(run)))
    return out


def fit_ring(
    t: np.ndarray, x: np.ndarray, *, sigma: float, scale: float, max_samples: int = 40_000
) -> tuple[DampedSine, int] | None:
    """Fit a damped sinusoid to the ring ``x(t)`` that starts at its first peak
    ``t[0]``. ``sigma`` is the noise deviation, ``scale`` the step size (for
    the hysteresis floor, 0.2 % of the step). Returns the fit and the number
    of extrema seen, or ``None`` when fewer than two extrema stand above the
    noise."""
    from scipy.optimize import least_squares

    h = max(3.0 * sigma, 2e-3 * scale)
    ext = ring_extrema(x, h)
    # keep extrema that stand clearly above the noise
    ext = [i for i in ext if abs(x[i]) > 1.2 * h]
    # they must alternate, starting with the first peak
    if len(ext) < 2 or ext[0] > len(x) // 2:
        return None
    if len(ext) < 2:
        return None
    first_gap = ext[1] - ext[0]
    for k in range(1, len(ext)):
        gap = ext[k] - ext[k - 1]
        if x[ext[k]] * x[ext[k - 1]] > 0 or gap > 1.6 * first_gap or gap < 0.6 * first_gap:
            ext = ext[:k]
            break
    if len(ext) < 2:
        return None
    te = t[ext]
    half = float(np.mean(np.diff(te)))
    omega0 = np.pi / half
    a0, a1 = abs(x[ext[0]]), abs(x[ext[1]])
    alpha0 = max(np.log(a0 / a1) / (te[1] - te[0]), 1e-3 * omega0)
    # window: until the envelope sinks to the noise, at most 40 periods
    t_env = np.log(max(a0, 1e-300) / max(sigma, 1e-6 * a0)) / alpha0
    t_end = t[0] + min(max(t_env, 2.5 * half), 80 * half)
    n = int(np.searchsorted(t, t_end))
    n = max(n, min(len(t), ext[-1] + 2))
    stride = max(1, n // max_samples)
    tt = t[:n:stride] - t[0]
    xx = x[:n:stride]

    def basis(p: np.ndarray) -> np.ndarray:
        alpha, omega = p[0] * omega0, p[1] * omega0
        env = np.exp(-alpha * tt)
        return np.column_stack([env * np.cos(omega * tt), env * np.sin(omega * tt), np.ones_like(tt)])

    def residual(p: np.ndarray) -> np.ndarray:
        b = basis(p)
        coef, *_ = np.linalg.lstsq(b, xx, rcond=None)
        return b @ coef - xx

    p0 = np.array([alpha0 / omega0, 1.0])
    try:
        sol = least_squares(
            residual, p0, bounds=([0.0, 0.5], [10.0, 2.0]), x_scale=np.array([max(p0[0], 0.01), 0.1])
        )
        p = sol.x
    except (ValueError, np.linalg.LinAlgError):
        p = p0
    alpha, omega = float(p[0] * omega0), float(p[1] * omega0)
    coef, *_ = np.linalg.lstsq(basis(p), xx, rcond=None)
    amp = float(np.hypot(coef[0], coef[1]))
    phase = float(np.arctan2(-coef[1], coef[0]))
    return DampedSine(t0=float(t[0]), alpha=alpha, omega=omega, amplitude=amp, phase=phase,
                      offset=float(coef[2])), len(ext)
