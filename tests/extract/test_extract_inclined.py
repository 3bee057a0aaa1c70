"""Bars at a general angle (45 degree routing, bends, crossings) against scipy cubature
of Neumann's formula over both cross-sections."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate

from parasite.extract.filaments import filament_mutual
from parasite.extract.inclined import choose_order, inclined_mutual, segment_distance

EZ = np.array([0.0, 0.0, 1.0])
C45 = np.array([np.cos(np.pi / 4), np.sin(np.pi / 4), 0.0])
P = np.array([5e-3, 0.0, 0.0])
W, T = 0.5e-3, 35e-6


def _frame(s: np.ndarray, e: np.ndarray, w: float, t: float) -> tuple:
    s, e = np.asarray(s, float), np.asarray(e, float)
    u = (e - s) / np.linalg.norm(e - s)
    return (s, e, np.cross(EZ, u), EZ, w, t)


def _reference(fa: tuple, fb: tuple, rtol: float = 1e-6) -> float:
    """Mean over both rectangular sections of the filament formula (Neumann's formula in
    closed form, itself checked against scipy quad in test_extract_bars.py), by
    scipy.integrate.cubature over the four section coordinates."""
    sa, ea, wda, tda, wa, ta = fa
    sb, eb, wdb, tdb, wb, tb = fb

    def f(u: np.ndarray) -> np.ndarray:
        oa = u[:, 0:1] * wa * wda + u[:, 1:2] * ta * tda
        ob = u[:, 2:3] * wb * wdb + u[:, 3:4] * tb * tdb
        return filament_mutual(sa + oa, ea + oa, sb + ob, eb + ob)

    res = integrate.cubature(f, np.full(4, -0.5), np.full(4, 0.5), rtol=rtol, atol=0.0,
                             max_subdivisions=1_000_000)
    assert res.status == "converged"
    return float(res.estimate)


def _ours(fa: tuple, fb: tuple) -> float:
    dist = segment_distance(fa[0][None], fa[1][None], fb[0][None], fb[1][None])
    order = choose_order(dist, np.array([max(fa[4], fa[5], fb[4], fb[5])]))
    same = bool(fa[0][2] == fb[0][2] and fa[5] == fb[5])
    return float(inclined_mutual(*(np.array([v]) for v in fa), *(np.array([v]) for v in fb),
                                 order, np.array([same]))[0])


CASES = {
    "gap of 1.4 sections": (_frame([0, 0, 0], P, W, T),
                            _frame(P + [0.5e-3, 0.5e-3, 0], P + [0.5e-3, 0.5e-3, 0] + 5e-3 * C45,
                                   W, T)),
    "gap of 5 sections": (_frame([0, 0, 0], P, W, T),
                          _frame(P + [2.5e-3, 0, 0], P + [2.5e-3, 0, 0] + 5e-3 * C45, W, T)),
    "gap of 15 sections": (_frame([0, 0, 0], P, W, T),
                           _frame(P + [7.5e-3, 0, 0], P + [7.5e-3, 0, 0] + 5e-3 * C45, W, T)),
    "crossing on another layer": (_frame([0, 0, 0], P, W, T),
                                  _frame([1e-3, -2e-3, 0.2e-3], [4e-3, 2e-3, 0.2e-3], W, T)),
    "45 degree bend, touching": (_frame([0, 0, 0], P, W, T), _frame(P, P + 5e-3 * C45, W, T)),
    "45 degree bend, widths 0.2 and 1 mm, touching": (
        _frame([0, 0, 0], P, 0.2e-3, T), _frame(P, P + 3e-3 * C45, 1e-3, T)),
    "short piece at 29 degrees, touching": (
        _frame([0, 0, 0], P, W, T),
        _frame(P, P + 1e-3 * np.array([np.cos(0.5), np.sin(0.5), 0.0]), W, T)),
    "45 degree, 0.05 mm apart": (
        _frame([0, 0, 0], P, W, T),
        _frame(P + [0.05e-3, 0, 0], P + [0.05e-3, 0, 0] + 3e-3 * C45, W, T)),
}


@pytest.mark.parametrize("name", list(CASES))
def test_inclined_bars_against_cubature(name: str) -> None:
    """Separated bars, and bars of one layer touching at a shared vertex (where the
    filament integrand has kinks): relative error <= 1e-4. Reference: scipy cubature over
    both sections, rtol 1e-6 (separated) or 1e-5 (touching, slower to converge)."""
    fa, fb = CASES[name]
    ref = _reference(fa, fb, rtol=1e-5 if "touching" in name else 1e-6)
    assert _ours(fa, fb) == pytest.approx(ref, rel=1e-4, abs=0)


@pytest.mark.slow
@pytest.mark.parametrize("name", ["135", "thick"])
def test_touching_bends_against_cubature_slow(name: str) -> None:
    """A 135 degree bend (current turning back) and a 45 degree bend of thick copper
    (0.3 mm): as above, tolerance 1e-4 (cubature rtol 2e-5)."""
    if name == "135":
        fa = _frame([0, 0, 0], P, W, T)
        fb = _frame(P, P + 5e-3 * np.array([-C45[0], C45[1], 0.0]), W, T)
    else:
        fa = _frame([0, 0, 0], P, W, 0.3e-3)
        fb = _frame(P, P + 5e-3 * C45, W, 0.3e-3)
    assert _ours(fa, fb) == pytest.approx(_reference(fa, fb, rtol=2e-5), rel=1e-4, abs=0)


def test_segment_distance() -> None:
    """Shortest distance between segments: elementary cases (skew, parallel overlapping,
    end to end, crossing)."""
    p = np.array([[0.0, 0, 0], [0, 0, 0], [0, 0, 0], [0, 0, 0]])
    q = np.array([[1.0, 0, 0], [1, 0, 0], [1, 0, 0], [1, 0, 0]])
    r = np.array([[0.5, -1, 2], [0.2, 0.3, 0], [2, 0, 0], [0.5, -1, 0]])
    s = np.array([[0.5, 1, 2], [0.8, 0.3, 0], [3, 1, 0], [0.5, 1, 0]])
    assert segment_distance(p, q, r, s) == pytest.approx([2.0, 0.3, 1.0, 0.0])
