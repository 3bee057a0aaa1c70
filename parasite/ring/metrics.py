"""Ringing metrics of each switching edge: frequency, damping, overshoot, settling.

Definitions (SI units; docs/ring.md says the same for users):

* final level: median of the last 40 % of the time between this edge and the
  next one (or the end of the record); initial level: the previous edge's
  final level (for the first edge, the median of the last 40 % before it);
  step = final - initial.
* peak overshoot: how far the waveform goes past the final level after the
  edge, in V and as a fraction of |step|.
* ring frequency f_d (Hz), damping ratio zeta and logarithmic decrement
  delta = 2 pi zeta / sqrt(1 - zeta^2): from a least-squares fit of damped
  sinusoids on a slow line to the ring after the edge
  (:mod:`parasite.ring.damped`, which states the fit window); zeta follows
  W. T. Thomson, M. D. Dahleh, *Theory of Vibration with Applications*, 5th
  ed., 1998, section 2.6 (logarithmic decrement) -- cited from memory.
* ring amplitude (V): the fitted ring's amplitude at the start of its fit
  window (after the first lobe when that was left out).
* settling time: from the edge's 50 % crossing until the waveform last
  leaves final level +- band |step| (band 5 % by default). Read on the
  samples as they are (noise larger than the band means "not settled") and,
  where a ring was fitted, also on the fitted ring between the samples, so
  that a ring sampled a few times per period is not settled early.

Where a number cannot be measured it is ``None`` and a reason says why.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from parasite.ring.damped import DampedSine, RingFit, fit_ring
from parasite.ring.edges import Edge, find_edges, uniform

__all__ = ["DEFAULT_BAND", "DampedSine", "RingMetrics", "edge_metrics", "ring_metrics"]

DEFAULT_BAND = 0.05
"""Default settling band: +-5 % of the step (common practice)."""


@dataclass(frozen=True)
class RingMetrics:
    """Metrics of the ring after one edge. SI units: s, V, Hz.

    ``frequency``, ``damping_ratio``, ``log_decrement`` and
    ``ring_amplitude`` are ``None`` when the ring cannot be measured, and
    ``ring_reason`` says why; ``settling_time`` is ``None`` when the waveform
    has not settled into the band before the next edge (or the end of the
    record), and ``settling_reason`` says so. ``fit`` is the fitted ring (the
    window, residual noise, a second mode) when there is one.
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
    ring_amplitude: float | None = None
    ring_reason: str | None = None
    settling_reason: str | None = None
    fit: RingFit | None = None

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
            "ring_amplitude": self.ring_amplitude,
            "ring_reason": self.ring_reason,
            "settling_reason": self.settling_reason,
            "fit_window": None if self.fit is None else [self.fit.start, self.fit.stop],
            "first_lobe_skipped": None if self.fit is None else self.fit.first_lobe_skipped,
            "samples_per_period": None if self.fit is None else self.fit.samples_per_period,
            "residual_noise": None if self.fit is None else self.fit.noise,
            "second_mode": None if self.fit is None or self.fit.second is None else {
                "frequency": self.fit.second.frequency,
                "damping_ratio": self.fit.second.damping_ratio,
                "amplitude": self.fit.second.amplitude,
            },
        }


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
            # stop before the next transition begins: where the waveform last
            # lay within 5 % of the span of its old level before the next edge
            # (a slow start, e.g. a Miller plateau, leaves the level early),
            # then back off three times the samples it took from there to 50 %
            old = nxt.low if nxt.direction > 0 else nxt.high
            near = np.flatnonzero(np.abs(v[edge.index : nxt.start + 1] - old)
                                  <= 0.05 * (nxt.high - nxt.low))
            start = edge.index + int(near[-1]) if near.size else nxt.start
            end = start - 3 * (nxt.index - nxt.start) - 2
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
    fit = fit_ring(ts, x, scale=mag)
    reason = fit if isinstance(fit, str) else None
    ring = None if isinstance(fit, str) else fit
    band_v = band * abs(step)
    outside = np.flatnonzero(np.abs(x) > band_v)
    settling: float | None
    settling_reason = None
    if outside.size == 0:
        settling = max(float(ts[0] - edge.time), 0.0)
    elif outside[-1] >= len(x) - 1 - max(2, len(x) // 50):
        settling = None
        settling_reason = (f"still outside +-{band_v:.3g} V of the final level at the end of "
                           f"its window ({(ts[-1] - edge.time) * 1e9:.4g} ns after the edge)")
    else:
        settling = float(ts[outside[-1] + 1] - edge.time)
        if ring is not None:
            # between the samples: a ring sampled a few times per period has its
            # peaks between them, so the fitted ring is read on a fine grid too
            fine = _fine_grid(ring.start, ring.stop, float(ts[1] - ts[0]) / 16)
            out_fit = np.flatnonzero(np.abs(ring.deviation(fine)) > band_v)
            if out_fit.size:
                settling = max(settling, float(fine[out_fit[-1]] - edge.time))
    return RingMetrics(
        edge_time=edge.time,
        direction=d,
        initial=initial,
        final=final,
        step=step,
        peak=peak,
        overshoot=overshoot,
        overshoot_ratio=overshoot / mag,
        frequency=None if ring is None else ring.mode.frequency,
        damping_ratio=None if ring is None else ring.mode.damping_ratio,
        log_decrement=None if ring is None else ring.mode.log_decrement,
        settling_time=settling,
        band=band_v,
        band_fraction=band,
        extrema=0 if ring is None else ring.extrema,
        ring_amplitude=None if ring is None else ring.mode.amplitude,
        ring_reason=reason,
        settling_reason=settling_reason,
        fit=ring,
    )


def _fine_grid(start: float, stop: float, step: float, max_points: int = 400_000) -> np.ndarray:
    """An even grid from ``start`` to ``stop`` (s), ``step`` apart or coarser."""
    n = int(min(max_points, max(2, (stop - start) / step + 1)))
    return np.linspace(start, stop, n)
