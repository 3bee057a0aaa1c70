"""Closed forms for filaments and rectangular bars against published results and
independent high-precision references."""

from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from parasite.extract.bars import (
    CORNER_SIGNS,
    FAR_RATIO,
    bar_self_inductance,
    hoer_love_f,
    mean_log_distance,
    parallel_bars,
    rect_log_kernel,
)
from parasite.extract.filaments import filament_mutual, gauss_legendre_mutual
from tests.extract_refs import _f_mp, hoer_love_f_mp, hoer_love_mp, neumann_bars_cubature, neumann_filament_np

EX, EY, EZ = np.eye(3)


def test_hoer_love_function_is_the_sixfold_antiderivative() -> None:
    """Hoer & Love (1965): d^6F/(dx^2 dy^2 dz^2) = 1/r. mpmath's numerical
    differentiation at 40 digits of an independent transcription; tolerance 1e-12."""
    for p in [(0.3, 0.7, 1.1), (1.2, 0.4, 0.5), (2.0, 0.05, 0.3)]:
        with mp.workdps(40):
            d6 = mp.diff(_f_mp, p, (2, 2, 2))
            assert abs(d6 * mp.sqrt(sum(v * v for v in p)) - 1) < 1e-12
        assert float(hoer_love_f(*(np.array(v) for v in p))) == pytest.approx(
            float(hoer_love_f_mp(*p)), rel=1e-13, abs=0)


def test_rectangle_log_kernel_and_published_gmd() -> None:
    """Geometric mean distance of a square: 0.44705 a; of a thin strip: a e^(-3/2) =
    0.22313 a (Rosa & Grover, 'Formulas and tables for the calculation of mutual and
    self-inductance', Bull. Bureau of Standards 8, 1912; Grover 1946, tables of
    geometric mean distances).
    The square's constant is recalled from memory; e^(-3/2) is exact. Tolerances: 2e-5
    (square, 5 digits), 5e-4 (strip of finite thickness t = 1e-4 a)."""
    one, zero = np.array([1.0]), np.array([0.0])
    assert np.exp(mean_log_distance(zero, zero, one, one, one, one))[0] == pytest.approx(
        0.44705, rel=2e-5, abs=0)
    thin = one * 1e-4
    assert np.exp(mean_log_distance(zero, zero, one, thin, one, thin))[0] == pytest.approx(
        np.exp(-1.5), rel=5e-4, abs=0)
    # the kernel's 4th mixed derivative is ln r (mpmath numerical differentiation)
    with mp.workdps(30):
        def g(y: mp.mpf, z: mp.mpf) -> mp.mpf:
            return ((6 * y * y * z * z - y**4 - z**4) * mp.log(y * y + z * z) / 48
                    + (y**3 * z * mp.atan(z / y) + y * z**3 * mp.atan(y / z)) / 6
                    - 25 * y * y * z * z / 48)
        d = mp.diff(g, (0.3, 0.7), (2, 2))
        assert abs(d - mp.log(mp.sqrt(0.58))) < 1e-12
        assert float(rect_log_kernel(np.array(0.3), np.array(0.7))) == pytest.approx(
            float(g(mp.mpf(0.3), mp.mpf(0.7))), rel=1e-13, abs=0)


@pytest.mark.parametrize("length, width, thickness", [
    (1e-3, 1e-3, 1e-3), (10e-3, 0.2e-3, 35e-6), (100e-3, 0.2e-3, 35e-6),
    (0.1e-3, 2e-3, 35e-6), (50e-3, 5e-3, 18e-6), (300e-3, 0.1e-3, 35e-6),
])
def test_bar_self_inductance_exact(length: float, width: float, thickness: float) -> None:
    """Self partial inductance of a bar = Hoer & Love's exact corner sum with both bars
    the same (Ruehli, IBM J. Res. Dev. 16(5), 1972), evaluated by mpmath at 80 digits.
    Tolerance 1e-8: float64 evaluation of a well-conditioned form."""
    ref = hoer_love_mp(0, length, 0, length, 0, 0, width, thickness, width, thickness, dps=80)
    got = bar_self_inductance(np.array([length]), np.array([width]), np.array([thickness]))[0]
    assert got == pytest.approx(ref, rel=1e-8, abs=0)


@pytest.mark.parametrize("l_cm, b_cm, c_cm", [(1.0, 0.1, 0.1), (10.0, 0.1, 0.1),
                                              (1.0, 0.02, 0.0035), (10.0, 0.2, 0.0035)])
def test_bar_self_inductance_grover(l_cm: float, b_cm: float, c_cm: float) -> None:
    """Grover, Inductance Calculations (1946), straight bar of rectangular section:
    L = 0.002 l [ln(2l/(B+C)) + 1/2 + 0.2235 (B+C)/l] uH, l, B, C in cm, an
    approximation for l >> B + C (formula recalled from memory). Tolerance 0.3%: the
    approximation's own error for l/(B+C) >= 5."""
    grover = 0.002 * l_cm * (np.log(2 * l_cm / (b_cm + c_cm)) + 0.5
                             + 0.2235 * (b_cm + c_cm) / l_cm) * 1e-6
    got = bar_self_inductance(np.array([l_cm / 100]), np.array([b_cm / 100]),
                              np.array([c_cm / 100]))[0]
    assert got == pytest.approx(grover, rel=3e-3, abs=0)


def test_narrow_trace_rule_of_thumb() -> None:
    """Common practice (no source): an isolated narrow trace is roughly 1 nH per mm.
    A sanity check only: 0.2 mm x 35 um copper, 10 mm long, within 0.5 to 1.5 nH/mm."""
    got = bar_self_inductance(np.array([10e-3]), np.array([0.2e-3]), np.array([35e-6]))[0]
    assert 0.5e-9 < got / 10 < 1.5e-9


def _raw_hoer_love(a0: float, a1: float, b0: float, b1: float, dy: float, dz: float,
                   w1: float, t1: float, w2: float, t2: float) -> float:
    """The 64-term corner sum evaluated directly in float64."""
    def cd(p0: float, p1: float, q0: float, q1: float) -> np.ndarray:
        return np.array([q1 - p0, q1 - p1, q0 - p0, q0 - p1])
    x, y, z = cd(a0, a1, b0, b1), cd(-w1 / 2, w1 / 2, dy - w2 / 2, dy + w2 / 2), \
        cd(-t1 / 2, t1 / 2, dz - t2 / 2, dz + t2 / 2)
    f = hoer_love_f(x[:, None, None], y[None, :, None], z[None, None, :])
    s = np.einsum("i,j,k,ijk->", CORNER_SIGNS, CORNER_SIGNS, CORNER_SIGNS, f)
    return float(1e-7 * s / (w1 * t1 * w2 * t2))


def test_raw_float64_corner_sum_loses_precision() -> None:
    """Why a switch is needed: the direct float64 alternating sum of Hoer & Love (1965)
    for long thin bars far apart is off by more than 1e-4 against mpmath at 60 digits."""
    args = (0.0, 50e-3, 10e-3, 60e-3, 0.2, 0.0, 0.2e-3, 35e-6, 0.2e-3, 35e-6)
    ref = hoer_love_mp(*args)
    assert abs(_raw_hoer_love(*args) - ref) > 1e-4 * abs(ref)
    got = parallel_bars(*(np.array([v]) for v in args))[0]
    assert got == pytest.approx(ref, rel=1e-6, abs=0)


def _sweep_cases() -> list[tuple[float, ...]]:
    cases = []
    sections = [(0.2e-3, 35e-6, 0.2e-3, 35e-6), (2e-3, 35e-6, 0.5e-3, 70e-6),
                (0.1e-3, 0.1e-3, 1e-3, 18e-6)]
    lengths = [(1e-3, 1e-3), (10e-3, 3e-3), (50e-3, 50e-3), (0.3e-3, 20e-3)]
    ratios = [0.5, 1, 3, FAR_RATIO * 0.99, FAR_RATIO, 12, 30, 200, 1000]
    angles = [0.0, 0.4, np.pi / 2]
    offsets = [0.0, 0.5, 1.1]
    rng = np.random.default_rng(7)
    for l1, l2 in lengths:
        for w1, t1, w2, t2 in sections:
            h = max(w1, w2, t1, t2)
            for ratio in ratios:
                ang = angles[rng.integers(3)]
                off = offsets[rng.integers(3)]
                rho = ratio * h
                b0 = off * l1 - 0.3 * l2
                cases.append((0.0, l1, b0, b0 + l2, rho * np.cos(ang), rho * np.sin(ang),
                              w1, t1, w2, t2))
    return cases


def test_parallel_bar_switch_rule_sweep() -> None:
    """The switch between the exact form and the moment-corrected filaments keeps the
    relative error <= 1e-4 everywhere: a sweep over sizes (aspect up to 57:1), lengths
    (0.3 to 50 mm), axial offsets and centre distances from 0.5 to 1000 times the largest
    section dimension, on both sides of the switch, against Hoer & Love (1965)
    evaluated in mpmath at 50 digits."""
    cases = _sweep_cases()
    got = parallel_bars(*(np.array(c) for c in zip(*cases, strict=True)))
    worst = 0.0
    for case, value in zip(cases, got, strict=True):
        ref = hoer_love_mp(*case, dps=50)
        worst = max(worst, abs(value - ref) / abs(ref))
    assert worst <= 1e-4


def test_parallel_bars_against_scipy_cubature() -> None:
    """Hoer & Love's formula as implemented, against scipy cubature of Neumann's
    formula over both cross-sections (independent of the closed form). Tolerance 1e-5
    (cubature rtol 1e-6)."""
    w, t = 0.5e-3, 0.1e-3
    fa = (np.zeros(3), 5e-3 * EX, EY, EZ, w, t)
    fb = (np.array([1e-3, 1e-3, 0.0]), np.array([6e-3, 1e-3, 0.0]), EY, EZ, w, t)
    ref = neumann_bars_cubature(fa, fb)
    got = parallel_bars(*(np.array([v]) for v in (0, 5e-3, 1e-3, 6e-3, 1e-3, 0, w, t, w, t)))[0]
    assert got == pytest.approx(ref, rel=1e-5, abs=0)


@pytest.mark.parametrize("pb, qb", [
    ((0, 0, 0), (1, 1, 0)),  # sharing the start point, 45 degrees
    ((1, 0, 0), (2, 1, 0)),  # touching end to start, 45 degrees
    ((2, 0.5, 0.3), (2.5, 1.7, -0.4)),  # skew
    ((0.3, 0.2, 0), (0.9, 0.25, 0)),  # coplanar, nearly parallel
    ((2, 0.1, 0), (3, 0.1, 0)),  # parallel
    ((3, 0.1, 0), (2, 0.1, 0)),  # antiparallel
    ((-0.5, 2, 0.2), (0.7, 2.2, 1.4)),
])
def test_filament_mutual_against_quadrature(pb: tuple[float, ...], qb: tuple[float, ...]) -> None:
    """Neumann's formula in closed form (Grover 1946; skew extension) against scipy
    quad of the same double line integral with the inner integral done analytically.
    Tolerance 1e-9."""
    pa, qa = np.zeros(3), EX
    ref = neumann_filament_np(pa, qa, np.array(pb, float), np.array(qb, float))
    got = float(filament_mutual(pa, qa, np.array(pb, float), np.array(qb, float)))
    assert got == pytest.approx(ref, rel=1e-9, abs=0)


def test_filament_mutual_perpendicular_is_zero() -> None:
    """Neumann's formula has the factor u_a . u_b: perpendicular filaments give exactly 0."""
    got = filament_mutual(np.zeros(3), EX, np.array([0.5, 0.5, 0.0]), np.array([0.5, 1.5, 0.3]))
    assert got == 0.0


def test_grover_filaments_meeting_at_an_angle() -> None:
    """Grover 1946, filaments meeting at a point: two filaments of lengths l, m meeting at a point at angle
    theta, both directed away from the common point:
    M = mu0/(4 pi) 2 cos(theta) [l atanh(m/(l+R)) + m atanh(l/(m+R))],
    R^2 = l^2 + m^2 - 2 l m cos(theta) (recalled from memory; the quadrature test above
    checks the same closed form independently). Tolerance 1e-12."""
    for l_, m_, theta in [(1.0, 1.0, np.pi / 4), (2.0, 0.5, np.pi / 3), (1.0, 3.0, 2.0)]:
        pa, qa = np.zeros(3), l_ * EX
        qb = m_ * np.array([np.cos(theta), np.sin(theta), 0.0])
        r = np.sqrt(l_**2 + m_**2 - 2 * l_ * m_ * np.cos(theta))
        ref = 1e-7 * 2 * np.cos(theta) * (l_ * np.arctanh(m_ / (l_ + r))
                                          + m_ * np.arctanh(l_ / (m_ + r)))
        got = float(filament_mutual(pa, qa, np.zeros(3), qb))
        assert got == pytest.approx(ref, rel=1e-12, abs=0)


def test_gauss_legendre_converges_to_closed_form() -> None:
    """Gauss-Legendre quadrature of Neumann's formula (8 points each) for filaments
    several lengths apart agrees with the closed form to 1e-9."""
    pa, qa = np.zeros(3), EX
    pb, qb = np.array([3.0, 2.0, 1.0]), np.array([3.5, 3.0, 0.2])
    assert float(gauss_legendre_mutual(pa, qa, pb, qb, 8)) == pytest.approx(
        float(filament_mutual(pa, qa, pb, qb)), rel=1e-9, abs=0)
