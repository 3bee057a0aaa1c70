"""Switching edges of a two-level waveform (a switch node, a gate drive).

The two levels are the 10th and 90th percentiles of the samples; an edge is a
passage from below 30 % to above 70 % of the span between them (or back), and
its time is the last crossing of 50 % before the far threshold is reached
(linear interpolation between samples). The hysteresis keeps ringing and noise
around one level from counting as edges. Common practice for edge timing on
digitised waveforms (the 50 % reference level, as pulse measurement standards
define it), not a formula from a source.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from parasite.errors import MeasurementError


@dataclass(frozen=True)
class Edge:
    """One switching edge: ``time`` of the 50 % crossing in s, ``direction``
    +1 rising or -1 falling, ``index`` of the first sample after the crossing,
    ``start`` the last sample still beyond the old level's threshold (where the
    transition begins), and the low and high levels (V) used to find it."""

    time: float
    direction: int
    index: int
    start: int
    low: float
    high: float


def uniform(
    t: np.ndarray, v: np.ndarray, dt: float | None = None, max_points: int = 4_000_000
) -> tuple[np.ndarray, np.ndarray]:
    """Resample ``v(t)`` onto an even time grid by linear interpolation.

    ngspice's time steps are uneven. ``dt`` defaults to the 25th percentile of
    the sample spacing (fine enough for the fast parts, which take the small
    steps), raised if the grid would exceed ``max_points``.
    """
    t = np.asarray(t, dtype=float)
    v = np.asarray(v, dtype=float)
    if t.ndim != 1 or t.shape != v.shape or t.size < 3:
        raise ValueError("time and values must be 1-D arrays of the same length (at least 3)")
    steps = np.diff(t)
    if np.any(steps <= 0):
        # ngspice can repeat a time point at a breakpoint: keep the last value.
        keep = np.concatenate([steps > 0, [True]])
        t, v = t[keep], v[keep]
        steps = np.diff(t)
    span = t[-1] - t[0]
    if dt is None:
        dt = float(np.percentile(steps, 25))
    dt = max(dt, span / max_points)
    n = int(np.floor(span / dt)) + 1
    grid = t[0] + dt * np.arange(n)
    return grid, np.interp(grid, t, v)


def find_edges(
    t: np.ndarray,
    v: np.ndarray,
    *,
    low: float | None = None,
    high: float | None = None,
    min_dwell: float | None = None,
    name: str = "<waveform>",
) -> list[Edge]:
    """Switching edges of ``v(t)`` (see the module notes for the method).

    ``min_dwell`` (s): see :func:`merge_ringing`. Raises
    :class:`~parasite.errors.MeasurementError` when the waveform has no two
    distinct levels.
    """
    t = np.asarray(t, dtype=float)
    v = np.asarray(v, dtype=float)
    lo = float(np.percentile(v, 10)) if low is None else low
    hi = float(np.percentile(v, 90)) if high is None else high
    span = hi - lo
    noise = _noise_sigma(v)
    if not np.isfinite(span) or span <= max(8.0 * noise, 1e-12 * max(abs(hi), abs(lo), 1.0)):
        raise MeasurementError(
            f"no switching edge: the waveform does not move between two levels "
            f"(10th percentile {lo:.4g}, 90th percentile {hi:.4g}, noise about {noise:.2g})",
            file=name,
        )
    upper = lo + 0.7 * span
    lower = lo + 0.3 * span
    mid = lo + 0.5 * span
    state = np.where(v > upper, 1, np.where(v < lower, -1, 0))
    armed = np.flatnonzero(state)
    if armed.size == 0:
        return []
    s = state[armed]
    changes = np.flatnonzero(s[1:] != s[:-1]) + 1
    raw: list[Edge] = []
    above = v > mid
    for c in changes:
        i_prev, i_now = int(armed[c - 1]), int(armed[c])
        direction = int(s[c])
        # last 50 % crossing in (i_prev, i_now]
        seg = above[i_prev : i_now + 1]
        flips = np.flatnonzero(seg[1:] != seg[:-1])
        j = i_prev + int(flips[-1]) if flips.size else i_now - 1
        v0, v1 = v[j], v[j + 1]
        frac = 0.0 if v1 == v0 else (mid - v0) / (v1 - v0)
        frac = min(max(frac, 0.0), 1.0)
        time = float(t[j] + frac * (t[j + 1] - t[j]))
        raw.append(
            Edge(time=time, direction=direction, index=j + 1, start=i_prev, low=lo, high=hi)
        )
    return merge_ringing(raw, float(t[0]), float(t[-1]), min_dwell)


def merge_ringing(
    raw: list[Edge], t_start: float, t_end: float, min_dwell: float | None = None
) -> list[Edge]:
    """Merge threshold crossings that belong to one transition.

    A ring larger than 20 % of the step crosses the thresholds again. Crossings
    closer than ``min_dwell`` (s) to the previous one form a cluster; a cluster
    with an odd number of crossings is one edge (at its first crossing), an
    even one is a glitch and is dropped. ``min_dwell`` defaults to 5 % of the
    longest time the waveform dwells at one level (including before the first
    and after the last crossing): switching intervals are long, ring
    half-periods short.
    """
    if not raw:
        return []
    times = np.array([e.time for e in raw])
    gaps = np.diff(np.concatenate([[t_start], times, [t_end]]))
    dwell = 0.05 * float(np.max(gaps)) if min_dwell is None else min_dwell
    out: list[Edge] = []
    cluster = [raw[0]]
    for e in raw[1:]:
        if e.time - cluster[-1].time < dwell:
            cluster.append(e)
            continue
        if len(cluster) % 2 == 1:
            out.append(cluster[0])
        cluster = [e]
    if len(cluster) % 2 == 1:
        out.append(cluster[0])
    return out


def _noise_sigma(v: np.ndarray) -> float:
    """White-noise standard deviation from the sample-to-sample differences
    (median absolute deviation, scaled for a normal distribution: 0.6745 is
    the normal distribution's MAD/sigma; divided by sqrt(2) for a difference)."""
    d = np.diff(v)
    if d.size == 0:
        return 0.0
    mad = float(np.median(np.abs(d - np.median(d))))
    return mad / 0.6745 / np.sqrt(2.0)
