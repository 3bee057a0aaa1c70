"""Round conductors (via barrels, probe leads): self and coaxial mutual inductance
against published formulas and an independent scipy cubature."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate

from parasite.extract.round import annulus_overlap, coaxial_round_mutual, round_self_inductance


def _g(x: np.ndarray, rho: np.ndarray) -> np.ndarray:
    return x * np.arcsinh(x / rho) - np.sqrt(x * x + rho * rho)


def _coaxial_reference(a0: float, a1: float, b0: float, b1: float, ro1: float, ri1: float,
                       ro2: float, ri2: float, rtol: float = 1e-8) -> float:
    """Independent reference: the mean of the parallel-filament formula (Grover 1946, parallel filaments)
    over both annular sections, as a three-fold integral over the two radii and the
    angle between the points (scipy.integrate.cubature)."""
    def f(u: np.ndarray) -> np.ndarray:
        r1 = ri1 + (ro1 - ri1) * u[:, 0]
        r2 = ri2 + (ro2 - ri2) * u[:, 1]
        ph = np.pi * u[:, 2]
        rho = np.sqrt(np.maximum(r1 * r1 + r2 * r2 - 2 * r1 * r2 * np.cos(ph), 1e-300))
        gsum = _g(b1 - a0, rho) - _g(b1 - a1, rho) - _g(b0 - a0, rho) + _g(b0 - a1, rho)
        return gsum * r1 * r2 * (ro1 - ri1) * (ro2 - ri2) * np.pi * 4 * np.pi
    res = integrate.cubature(f, np.zeros(3), np.ones(3), rtol=rtol, atol=0,
                             max_subdivisions=200000)
    a1_, a2_ = np.pi * (ro1**2 - ri1**2), np.pi * (ro2**2 - ri2**2)
    return float(1e-7 * res.estimate / (a1_ * a2_))


@pytest.mark.parametrize("case", [
    (0, 1.6e-3, 0, 1.6e-3, 0.15e-3, 0.125e-3, 0.15e-3, 0.125e-3),  # plated barrel, self
    (0, 0.2e-3, 0.2e-3, 1.0e-3, 0.15e-3, 0.13e-3, 0.15e-3, 0.13e-3),  # via stack, touching
    (0, 0.5e-3, -0.5e-3, 0.0, 0.15e-3, 0.125e-3, 0.15e-3, 0.125e-3),  # via and its image
])
def test_coaxial_mutual_against_cubature(case: tuple[float, ...]) -> None:
    """Covariogram quadrature (lens areas of circles; Santalo 1976) against scipy
    cubature of the filament formula over both sections. Tolerance 1e-5."""
    ref = _coaxial_reference(*case)
    got = coaxial_round_mutual(*(np.array([v]) for v in case))[0]
    assert got == pytest.approx(ref, rel=1e-5, abs=0)


@pytest.mark.slow
@pytest.mark.parametrize("case", [
    (0, 1e-3, 0, 1e-3, 0.15e-3, 0, 0.15e-3, 0),  # solid wire, self
    (0, 1e-3, -0.5e-3, 0.3e-3, 0.2e-3, 0, 0.1e-3, 0.05e-3),  # overlapping, different sections
])
def test_coaxial_mutual_against_cubature_solid(case: tuple[float, ...]) -> None:
    """As above for solid sections (slower references). Tolerance 1e-5."""
    ref = _coaxial_reference(*case, rtol=1e-7)
    got = coaxial_round_mutual(*(np.array([v]) for v in case))[0]
    assert got == pytest.approx(ref, rel=1e-5, abs=0)


@pytest.mark.parametrize("ratio", [20.0, 100.0, 1000.0])
def test_solid_round_wire_rosa(ratio: float) -> None:
    """Rosa (Bull. Bureau of Standards 4, 1908) / Grover (1946) eq. for a straight round
    wire with uniform current, expanded in r/l: L = mu0/(2 pi) [l ln(2l/r) - 3l/4
    + E(rho) - E(rho^2)/(4l) + E(rho^4)/(32 l^3)] with the published moments of the
    distance between two points of a disc: GMD r e^(-1/4) (Maxwell), mean 128 r/(45 pi),
    E(rho^2) = r^2, E(rho^4) = 7 r^4/6 (the first two recalled from memory, the last two
    elementary). Tolerance 1e-6 (the series is truncated at (r/l)^6)."""
    r = 1e-3
    length = ratio * r
    series = 2e-7 * (length * np.log(2 * length / r) - 0.75 * length + 128 * r / (45 * np.pi)
                     - r * r / (4 * length) + 7 * r**4 / 6 / (32 * length**3))
    got = round_self_inductance(np.array([length]), np.array([r]), np.array([0.0]))[0]
    assert got == pytest.approx(series, rel=1e-6, abs=0)
    # Rosa's leading form, 2l (ln(2l/r) - 3/4) in cgs, differs by the E(rho) term only
    leading = 2e-7 * length * (np.log(2 * length / r) - 0.75)
    assert abs(got - leading) <= 2e-7 * 1.0 * r


def test_thin_tube_grover() -> None:
    """A thin-walled tube (current on a circle): GMD = r, mean distance 4r/pi, E(rho^2) =
    2 r^2 (Grover 1946, tubular conductor; recalled from memory). Wall 0.01% of r;
    tolerance 5e-5."""
    r, length = 1e-3, 0.1
    series = 2e-7 * (length * np.log(2 * length / r) - length + 4 * r / np.pi
                     - 2 * r * r / (4 * length))
    got = round_self_inductance(np.array([length]), np.array([r]), np.array([0.9999 * r]))[0]
    assert got == pytest.approx(series, rel=5e-5, abs=0)


def test_annulus_overlap_limits() -> None:
    """Overlap of an annulus with itself at distance 0 is its area; beyond the sum of the
    outer radii it is 0; a disc's self-overlap at distance d is the lens area
    2 r^2 acos(d/2r) - (d/2) sqrt(4 r^2 - d^2) (elementary geometry)."""
    ro, ri = np.array(2.0), np.array(1.0)
    assert float(annulus_overlap(ro, ri, ro, ri, np.array(0.0))) == pytest.approx(3 * np.pi)
    assert float(annulus_overlap(ro, ri, ro, ri, np.array(4.0))) == 0.0
    d = 1.3
    lens = 2 * 4 * np.arccos(d / 4) - d / 2 * np.sqrt(16 - d * d)
    assert float(annulus_overlap(ro, np.array(0.0), ro, np.array(0.0), np.array(d))) == \
        pytest.approx(lens, rel=1e-13, abs=0)


def _parallel_round_reference(length: float, dist: float, offset: float, ro1: float, ri1: float,
                              ro2: float, ri2: float) -> float:
    """Independent reference for two parallel, side-by-side round conductors: the
    parallel-filament formula (Grover 1946, parallel filaments) averaged over both annular sections in
    polar coordinates (four-fold scipy cubature)."""
    def f(u: np.ndarray) -> np.ndarray:
        r1 = ri1 + (ro1 - ri1) * u[:, 0]
        r2 = ri2 + (ro2 - ri2) * u[:, 2]
        p1, p2 = 2 * np.pi * u[:, 1], 2 * np.pi * u[:, 3]
        dx = dist + r2 * np.cos(p2) - r1 * np.cos(p1)
        dy = r2 * np.sin(p2) - r1 * np.sin(p1)
        rho = np.hypot(dx, dy)
        b0, b1 = offset, offset + length
        gsum = _g(b1, rho) - _g(b1 - length, rho) - _g(b0, rho) + _g(b0 - length, rho)
        jac = r1 * r2 * (ro1 - ri1) * (ro2 - ri2) * 4 * np.pi**2
        return gsum * jac
    res = integrate.cubature(f, np.zeros(4), np.ones(4), rtol=1e-7, atol=0)
    a1_, a2_ = np.pi * (ro1**2 - ri1**2), np.pi * (ro2**2 - ri2**2)
    return float(1e-7 * res.estimate / (a1_ * a2_))


@pytest.mark.parametrize("dist, offset", [(1e-3, 0.0), (0.4e-3, 0.0), (0.5e-3, 1.6e-3)])
def test_parallel_vias_against_cubature(dist: float, offset: float) -> None:
    """Two plated barrels side by side (1 mm and 0.4 mm apart, 0.3 mm diameter), and one
    above the other's end: centre filaments with the second-moment correction
    (isotropic for round sections; the mean of a harmonic function over a disc is its
    centre value, so only the end terms are corrected; terms to fourth order) against
    scipy cubature over both sections. Tolerance 1e-4."""
    from parasite.extract.bars import parallel_filaments_corrected
    from parasite.extract.round import round_difference_m4, round_section_variance

    length, ro, ri = 1.6e-3, 0.15e-3, 0.125e-3
    ref = _parallel_round_reference(length, dist, offset, ro, ri, ro, ri)
    var = 2 * round_section_variance(np.array([ro]), np.array([ri]))
    got = parallel_filaments_corrected(np.array([0.0]), np.array([length]), np.array([offset]),
                                       np.array([offset + length]), np.array([dist]),
                                       np.array([0.0]), var, var,
                                       round_difference_m4(*(np.array([v]) for v in (ro, ri, ro, ri))))[0]
    assert got == pytest.approx(ref, rel=1e-4, abs=0)


def _bar_round_reference(length: float, dy: float, dz: float, w: float, t: float,
                         ro: float) -> float:
    """Independent reference for a solid round wire parallel to a bar of the same span:
    the parallel-filament formula averaged over the rectangle and the disc (polar
    coordinates), four-fold scipy cubature."""
    def f(u: np.ndarray) -> np.ndarray:
        y1, z1 = (u[:, 0] - 0.5) * w, (u[:, 1] - 0.5) * t
        r2, p2 = ro * u[:, 2], 2 * np.pi * u[:, 3]
        rho = np.hypot(dy + r2 * np.cos(p2) - y1, dz + r2 * np.sin(p2) - z1)
        gsum = 2 * _g(length, rho) - 2 * _g(0.0 * rho, rho)
        return gsum * r2 * ro * 2 * np.pi
    res = integrate.cubature(f, np.zeros(4), np.ones(4), rtol=1e-8, atol=0)
    return float(1e-7 * res.estimate / (np.pi * ro * ro))


@pytest.mark.parametrize("dy, dz, w, ro", [(0.0, 1e-3, 1e-3, 0.5e-3), (0.0, 0.7e-3, 2e-3, 0.5e-3),
                                           (1e-3, 0.5e-3, 0.3e-3, 0.3e-3)])
def test_lead_along_a_trace_against_cubature(dy: float, dz: float, w: float, ro: float) -> None:
    """A probe lead (solid round wire) lying along a trace, 0.2 to 0.5 mm above it:
    filaments over both sections against scipy cubature. Tolerance 1e-4 (the
    moment-corrected centre filaments alone are off by 5% in the second case)."""
    from parasite.extract.round import parallel_bar_round

    length, t = 10e-3, 35e-6
    ref = _bar_round_reference(length, dy, dz, w, t, ro)
    got = parallel_bar_round(0.0, length, 0.0, length, dy, dz, w, t, ro, 0.0)[0]
    assert got == pytest.approx(ref, rel=1e-4, abs=0)
