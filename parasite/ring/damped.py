"""The free ring after a switching edge, fitted as damped sinusoids on a line.

Model, tau in s from the start of the fit window:

    x(tau) = sum_k A_k exp(-alpha_k tau) cos(omega_k tau + phi_k) + c + s tau,

one mode (k = 1) or two, on a straight line c + s tau (a ring riding on a slow
slope, e.g. an inductor current charging the node). It is the free response of
a linear second-order system, one per resonance (W. T. Thomson, M. D. Dahleh,
*Theory of Vibration with Applications*, 5th ed., 1998, ch. 2 and 5 -- cited
from memory). From a mode: f_d = omega / 2 pi (Hz), decrement
delta = 2 pi alpha / omega, damping ratio zeta = alpha / sqrt(alpha^2 + omega^2).

Method (all steps vectorised; least squares by variable projection: the
amplitudes, phases, c and s are solved linearly for each trial alpha, omega):

1. The ring starts where the waveform first reaches its final level after the
   edge (x >= 0).
2. A first frequency from the spectrum of the part of the ring that still
   swings more than 10 % of its largest swing (no taper, 8x zero padding,
   peak refined by a parabola through the log magnitudes; it must stand 5x
   above the median of the spectrum away from it), then least squares
   (``scipy.optimize.least_squares``).
3. The first lobe (the overshoot right after the edge) is shaped by the
   switching transition itself and often does not belong to the free ring.
   The fit is made twice, from the first lobe's peak and from the next
   extremum half a period later; the earlier start is kept only when both
   fits agree (omega within 0.3 %, alpha within 3 %) and the earlier one
   describes the later window as well as the later fit does (residual within
   1.1x). The window runs until the envelope sinks to 3x the residual noise,
   at most 40 periods, before the next edge.
4. A second mode is kept when it removes more than half of the residual
   power; the reported ring is the mode with the more energy in the window
   (A^2 (1 - exp(-2 alpha T)) / (2 alpha) over the window length T).

A ring that cannot be measured gets a reason instead of numbers (too few
samples after the edge or per ring period, no overshoot, no ring above the
noise, window too short).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

MIN_SAMPLES_PER_PERIOD = 3.0
"""Below this many samples per ring period the fit is refused (Nyquist is 2;
some margin for noise)."""


@dataclass(frozen=True)
class DampedSine:
    """x = amplitude exp(-alpha tau) cos(omega tau + phase), tau = t - t0 (s).
    alpha in 1/s, omega in rad/s, amplitude in V."""

    t0: float
    alpha: float
    omega: float
    amplitude: float
    phase: float

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
        return self.amplitude * np.exp(-self.alpha * tau) * np.cos(self.omega * tau + self.phase)


@dataclass(frozen=True)
class RingFit:
    """A fitted ring: the reported ``mode``, an optional ``second`` mode, the
    fit window ``start``..``stop`` (s), the residual ``noise`` (V rms),
    ``extrema`` (half periods whose envelope stands above 3x the noise,
    counting the first lobe), ``samples_per_period``, whether the first
    lobe was left out of the fit (``first_lobe_skipped``) and the ``line``
    (c in V, s in V/s) the modes ride on."""

    mode: DampedSine
    second: DampedSine | None
    start: float
    stop: float
    noise: float
    extrema: int
    samples_per_period: float
    first_lobe_skipped: bool
    line: tuple[float, float] = (0.0, 0.0)

    def deviation(self, t: np.ndarray) -> np.ndarray:
        """The fitted waveform minus the final level (V, signed as the step) at
        times ``t`` (s) within the window: the modes plus the line."""
        tau = np.asarray(t) - self.start
        out = self.mode(t) + self.line[0] + self.line[1] * tau
        if self.second is not None:
            out = out + self.second(t)
        return out


MIN_PROMINENCE = 5.0
"""The spectral peak of a ring must stand this many times above the median of
the spectrum; white noise alone rarely reaches 4 (its largest of ~10^4 bins
of Rayleigh-distributed magnitudes is about 3.7 sigma against a median of
1.18 sigma: common practice, from the distribution)."""


def prominence(x: np.ndarray, dt: float, f: float) -> float:
    """|FFT| of ``x`` (line removed, no padding) at the bin nearest ``f`` (Hz)
    over the median |FFT| of the bins more than 20 % away from ``f``."""
    n = x.size
    tt = np.arange(n)
    slope, icpt = np.polyfit(tt, x, 1)
    mag = np.abs(np.fft.rfft(x - (icpt + slope * tt)))[1:]
    if mag.size < 4:
        return 0.0
    k = min(max(int(round(f * n * dt)) - 1, 0), mag.size - 1)
    peak = float(mag[max(k - 1, 0) : k + 2].max())
    freqs = (np.arange(mag.size) + 1) / (n * dt)
    far = mag[np.abs(freqs - f) > 0.2 * f]
    floor = float(np.median(far)) if far.size >= 4 else float(np.median(mag))
    return peak / max(floor, 1e-300)


def spectral_peak(x: np.ndarray, dt: float, f_min: float = 0.0) -> float:
    """Frequency (Hz) of the largest peak of |FFT| of ``x`` (line removed, zero
    padded 8x; no taper: a decaying ring is strongest at the window's start,
    which a taper would suppress), refined by a parabola through the log
    magnitudes of the three bins around it; bins below ``f_min`` are ignored."""
    n = x.size
    tt = np.arange(n)
    slope, icpt = np.polyfit(tt, x, 1)
    y = x - (icpt + slope * tt)
    nfft = 1 << int(np.ceil(np.log2(8 * n)))
    mag = np.abs(np.fft.rfft(y, nfft))
    freqs = np.fft.rfftfreq(nfft, dt)
    lo = max(int(np.searchsorted(freqs, max(f_min, 2.0 / (n * dt)))), 1)
    if lo >= mag.size - 1:
        return 0.0
    k = lo + int(np.argmax(mag[lo:-1]))
    a, b, c = np.log(mag[k - 1 : k + 2] + 1e-300)
    den = a - 2 * b + c
    shift = 0.5 * (a - c) / den if den < 0 else 0.0
    return float((k + max(-0.5, min(0.5, shift))) * (freqs[1] - freqs[0]))


def _solve(tt: np.ndarray, xx: np.ndarray, p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Basis (two columns per mode, then 1 and tau) for the nonlinear
    parameters p = [alpha_1, omega_1, alpha_2, omega_2, ...] and the linear
    coefficients by least squares."""
    cols = []
    for a, w in p.reshape(-1, 2):
        env = np.exp(-a * tt)
        cols += [env * np.cos(w * tt), env * np.sin(w * tt)]
    b = np.column_stack([*cols, np.ones_like(tt), tt])
    coef, *_ = np.linalg.lstsq(b, xx, rcond=None)
    return b, coef


def _fit(tt: np.ndarray, xx: np.ndarray, p0: np.ndarray, w0: float) -> tuple[np.ndarray, float]:
    """Least squares of the model from the starting parameters ``p0`` (alpha,
    omega pairs in 1/s, rad/s); each mode is scaled by its own starting omega
    and kept within 0.5x..2x of it (and below the limit of
    MIN_SAMPLES_PER_PERIOD). Returns the parameters and the residual rms."""
    from scipy.optimize import least_squares

    del w0  # each mode is scaled by its own start
    ref = np.repeat(p0[1::2], 2)
    q0 = p0 / ref
    modes = p0.size // 2
    top = 2 * np.pi / (MIN_SAMPLES_PER_PERIOD * float(tt[1] - tt[0])) / p0[1::2]
    lo = np.tile([0.0, 0.5], modes)
    hi = np.column_stack([np.full(modes, 3.0), np.clip(top, 0.5 + 1e-6, 2.0)]).ravel()
    q0 = np.clip(q0, lo + 1e-9, hi - 1e-9)

    def residual(q: np.ndarray) -> np.ndarray:
        b, coef = _solve(tt, xx, q * ref)
        return b @ coef - xx

    try:
        q = least_squares(residual, q0, bounds=(lo, hi), x_scale=np.maximum(q0, 0.01) * 0.1).x
    except (ValueError, np.linalg.LinAlgError):
        q = q0
    r = residual(q)
    return q * ref, float(np.sqrt(np.mean(r * r)))


def _modes(tt: np.ndarray, xx: np.ndarray, p: np.ndarray, t0: float) -> list[DampedSine]:
    _, coef = _solve(tt, xx, p)
    out = []
    for k, (a, w) in enumerate(p.reshape(-1, 2)):
        c, s = coef[2 * k], coef[2 * k + 1]
        out.append(DampedSine(t0, float(a), float(w), float(np.hypot(c, s)),
                              float(np.arctan2(-s, c))))
    return out


def _window(t: np.ndarray, i: int, stop: float, stride_cap: int) -> tuple[np.ndarray, int, int]:
    j = int(np.searchsorted(t, stop, side="right"))
    j = min(max(j, i + 8), t.size)
    stride = max(1, (j - i) // stride_cap)
    return np.arange(i, j, stride), i, j


def fit_ring(t: np.ndarray, x: np.ndarray, *, scale: float,
             max_samples: int = 20_000) -> RingFit | str:
    """Fit the ring ``x`` (V, the waveform minus its final level, signed so
    that the step is positive; an even time grid ``t`` in s that starts at the
    edge and ends before the next one). ``scale`` is the step size (V): a ring
    smaller than 0.2 % of it is not reported. Returns the fit, or the reason
    why the ring cannot be measured (a sentence)."""
    n = x.size
    if n < 16:
        return f"only {n} samples between the edge and the end of its window (16 needed)"
    dt = float(t[1] - t[0])
    above = np.flatnonzero(x >= 0)
    if above.size == 0 or float(x[above[0]:].max()) < 2e-3 * scale:
        return ("no overshoot: the waveform does not pass its final level by more than "
                "0.2 % of the step")
    z0 = int(above[0])
    if n - z0 < 16:
        return "the waveform reaches its final level too close to the end of the window"
    # the spectrum of the part where the ring is still strong (above 10 % of its
    # largest swing), so that the noise of a long tail cannot outweigh it
    ax = np.abs(x[z0:])
    strong = np.flatnonzero(ax > 0.1 * float(ax.max()))
    n_spec = min(max(int(strong[-1]) + 1, 64), 262_144)
    f0 = spectral_peak(x[z0 : z0 + n_spec], dt)
    if f0 <= 0:
        return "no ring: no spectral peak after the edge"
    prom = prominence(x[z0 : z0 + n_spec], dt, f0)
    if prom < MIN_PROMINENCE:
        return (f"no ring above the noise: no spectral peak stands out after the edge "
                f"(the largest is {prom:.1f}x the median; {MIN_PROMINENCE:g}x needed)")
    spp = 1.0 / (f0 * dt)
    if spp < MIN_SAMPLES_PER_PERIOD:
        return (f"too few samples per ring period ({spp:.1f} at {1e-9 / dt:.3g} GS/s; "
                f"at least {MIN_SAMPLES_PER_PERIOD:g} needed)")
    period = 1.0 / f0
    span = float(t[-1] - t[z0])
    if span < 1.5 * period:
        return (f"window too short: {span * 1e9:.3g} ns after the edge for a ring of about "
                f"{f0 / 1e6:.4g} MHz (1.5 periods needed)")
    # the first lobe's peak: the largest x within 3/4 period of reaching the final level
    j = min(n, z0 + max(2, int(0.75 * period / dt)))
    p0i = z0 + int(np.argmax(x[z0:j]))
    if t[-1] - t[p0i] < 2 * period:
        return (f"window too short: {(t[-1] - t[p0i]) * 1e9:.3g} ns after the first lobe's "
                f"peak for a ring of about {f0 / 1e6:.4g} MHz (2 periods needed)")
    w0 = 2 * np.pi * f0
    starts = [p0i]
    p1 = int(np.searchsorted(t, t[p0i] + 0.5 * period))
    if t[-1] - t[min(p1, n - 1)] >= 1.5 * period:
        starts.append(p1)
    fits = []
    for i in starts:
        stop = min(float(t[-1]), float(t[i]) + 40 * period)
        f_est = (spectral_peak(x[i : z0 + n_spec], dt, f_min=0.5 * f0)
                 if z0 + n_spec - i > 32 else f0)
        w_start = 2 * np.pi * f_est if 0.7 * f0 < f_est < 1.4 * f0 else w0
        p0 = np.array([_decay_guess(t[i:], x[i:], period), w_start])
        fits.append((i, *_fit_from(t, x, i, stop, p0, w0, period, max_samples)))
    chosen = fits[0]
    skipped = False
    if len(fits) == 2:
        i1, stop1, _, rms1 = fits[1]
        idx, _, _ = _window(t, i1, stop1, max_samples)
        t_first = float(t[fits[0][0]])
        b, coef = _solve(t[idx] - t_first, x[idx], fits[0][2])
        r = b @ coef - x[idx]
        # the earlier fit, judged on the later window with its own linear part
        rms0 = float(np.sqrt(np.mean(r * r)))
        a0, w0a = fits[0][2][:2]
        a1, w1a = fits[1][2][:2]
        agree = abs(w0a - w1a) <= 0.003 * w1a and abs(a0 - a1) <= 0.03 * max(a1, 1e-3 * w1a)
        if not agree or rms0 > 1.1 * rms1 + 1e-12 * scale:
            chosen, skipped = fits[1], True
    i, stop, p, rms = chosen
    idx, _, _ = _window(t, i, stop, max_samples)
    tt, xx = t[idx] - t[i], x[idx]
    modes = _modes(tt, xx, p, float(t[i]))
    _, coef = _solve(tt, xx, p)
    line = (float(coef[-2]), float(coef[-1]))
    # the reported ring: the mode with the most energy in the window (a heavily
    # damped mode that only shapes the start of the window has little)
    length = float(stop - t[i])

    def energy(m: DampedSine) -> float:
        return m.amplitude**2 * (length if m.alpha * length < 1e-6 else
                                 (1 - np.exp(-2 * m.alpha * length)) / (2 * m.alpha))

    # a mode larger than the swing, or damped beyond zeta = 0.5, shapes the
    # window but is no ring
    swing = float(np.abs(xx).max())
    rings = [m for m in modes if m.amplitude <= 3 * swing and m.damping_ratio < 0.5]
    if not rings:
        return (f"the fit found no ring: a mode of {modes[0].amplitude:.3g} V, damping ratio "
                f"{modes[0].damping_ratio:.2f}, for a waveform that swings {swing:.3g} V")
    modes = sorted(rings, key=lambda m: -energy(m))
    mode = modes[0]
    if not mode.amplitude > max(3 * rms, 2e-3 * scale):
        return (f"no ring above the noise: fitted amplitude {mode.amplitude:.3g} V against "
                f"{rms:.3g} V rms residual")
    half = np.pi / mode.omega
    window_halves = int((stop - t[i]) / half) + 1
    if mode.alpha > 0 and rms > 0:
        halves = int(np.log(mode.amplitude / (3 * rms)) / mode.alpha / half) + 1
    else:
        halves = window_halves
    extrema = min(halves, window_halves) + (1 if skipped else 0)
    if extrema < 2:
        return "no ring above the noise: fewer than two extrema stand above 3x the noise"
    return RingFit(mode=mode, second=modes[1] if len(modes) > 1 else None, start=float(t[i]),
                   stop=float(stop), noise=rms, extrema=extrema, line=line,
                   samples_per_period=2 * np.pi / (mode.omega * dt), first_lobe_skipped=skipped)


def _fit_from(t: np.ndarray, x: np.ndarray, i: int, stop: float, p0: np.ndarray, w0: float,
              period: float, max_samples: int) -> tuple[float, np.ndarray, float]:
    """One mode, then a second one when it removes more than half of the
    residual power, on the window from sample ``i`` to ``stop`` (s); then the
    window is shrunk to where the slowest envelope meets 3x the noise (at least
    3 periods) and the fit repeated. Returns (stop, parameters, residual rms)."""
    p = p0
    for attempt in range(2):
        idx, _, _ = _window(t, i, stop, max_samples)
        tt, xx = t[idx] - t[i], x[idx]
        p, rms = _fit(tt, xx, p[:2], w0)
        if tt.size > 64:
            b, coef = _solve(tt, xx, p)
            f1 = p[1] / (2 * np.pi)
            dts = float(tt[1] - tt[0])
            f2 = spectral_peak(xx - b @ coef, dts)
            if f2 > 0 and abs(f2 - f1) > 0.05 * f1 and f2 * dts < 1 / MIN_SAMPLES_PER_PERIOD:
                q, rms2 = _fit(tt, xx, np.array([p[0], p[1], p[0], 2 * np.pi * f2]), w0)
                if rms2 < np.sqrt(0.5) * rms:
                    p, rms = q, rms2
        if attempt == 1 or rms <= 0:
            break
        t_env = 0.0
        for m in _modes(tt, xx, p, float(t[i])):
            if m.amplitude > 3 * rms:
                t_env = max(t_env, float(np.log(m.amplitude / (3 * rms)) / max(m.alpha, 1e-30)))
        new_stop = min(stop, float(t[i]) + max(1.2 * t_env, 3 * period))
        if new_stop > t[i] + 0.9 * (stop - t[i]):
            break
        stop = new_stop
    return stop, p, rms


def _decay_guess(t: np.ndarray, x: np.ndarray, period: float) -> float:
    """Decay rate (1/s) from the peak |x| of successive periods (a line through
    their logarithms over the first ten periods), at least 1e-3 of omega."""
    w = 2 * np.pi / period
    dt = float(t[1] - t[0])
    per = max(1, int(round(period / dt)))
    k = min(10, x.size // per)
    if k < 2:
        return 0.05 * w
    peaks = np.abs(x[: k * per].reshape(k, per)).max(axis=1)
    slope = np.polyfit(np.arange(k) * period, np.log(peaks + 1e-300), 1)[0]
    return float(min(max(-slope, 1e-3 * w), 2.0 * w))
