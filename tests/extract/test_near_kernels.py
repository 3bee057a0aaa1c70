"""The compiled near pairs (parasite.extract.near_kernels) against the numpy reference
(parasite.extract.pairs._mutual through parasite.extract.matrix.near_values_numpy).

The formulas themselves are checked against published results elsewhere
(test_extract_bars.py: Hoer & Love 1965, Grover 1946; test_extract_inclined.py: scipy
cubature; test_extract_round.py); here the claim is that compiling them changed
nothing but rounding.

Rounding: most families agree within 1e-12 of sqrt(L_aa L_bb) (the Cauchy-Schwarz bound
of a mutual term). The exact sum for near parallel bars (Hoer & Love's function over the
4 x 4 section corners) cancels many digits, so two float64 evaluations of it differ by up
to the unit roundoff times the sum of the magnitudes of its terms (the standard error
bound of a floating-point sum: Higham, *Accuracy and Stability of Numerical Algorithms*,
2nd ed., 2002, sec. 4.2); numpy's vectorised arcsinh/arctan/log (SIMD) and the C
library's scalar ones (compiled code) differ in the last bit. :func:`near_bar_rounding`
evaluates that estimate, 4 U times the magnitudes; the differences measured on the
boards here stay below 6% of it, and a change of 1e-7 in one term of F, of one series
coefficient or of the switch to filaments exceeds it (checked by hand when this was
written).
"""

from __future__ import annotations

import numpy as np
import pytest

from geometry.model import SegmentArrays
from parasite.extract import near_kernels
from parasite.extract.bars import FAR_RATIO, SERIES_RATIO
from parasite.extract.filaments import MU0_4PI, corner_differences
from parasite.extract.matrix import listed_near, near_values, near_values_numpy, tables
from parasite.extract.pairs import (
    FAR_RULES,
    FAR_SECTION_RATIO,
    PARALLEL_SIN,
    PERPENDICULAR_COS,
    _Conductors,
)
from tests.extract.test_extract_matrix import _arrays, random_board

U = 2.0**-53  # unit roundoff of float64


def _f_magnitude(x: np.ndarray, y: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Sum of the magnitudes of the terms of Hoer & Love's F (parasite.extract.bars
    .hoer_love_f), m^5: what its rounding is relative to."""
    x, y, z = np.abs(x), np.abs(y), np.abs(z)
    x2, y2, z2 = x * x, y * y, z * z
    r = np.sqrt(x2 + y2 + z2)
    with np.errstate(divide="ignore", invalid="ignore"):
        def lg(a: np.ndarray, b2: np.ndarray, c2: np.ndarray) -> np.ndarray:
            den = np.sqrt(b2 + c2)
            return np.where(den > 0, a * np.arcsinh(a / den), 0.0)

        mag = (y2 * z2 / 4 + y2 * y2 / 24 + z2 * z2 / 24) * lg(x, y2, z2)
        mag += (x2 * z2 / 4 + x2 * x2 / 24 + z2 * z2 / 24) * lg(y, x2, z2)
        mag += (x2 * y2 / 4 + x2 * x2 / 24 + y2 * y2 / 24) * lg(z, x2, y2)
        mag += (x2 * x2 + y2 * y2 + z2 * z2 + 3 * x2 * y2 + 3 * y2 * z2 + 3 * x2 * z2) * r / 60
        mag += x * y * z * (z2 + y2 + x2) * (np.pi / 2) / 6
    return mag


def _g_magnitude(y: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Sum of the magnitudes of the terms of parasite.extract.bars.rect_log_kernel (m^4)."""
    y2, z2 = y * y, z * z
    s = y2 + z2
    with np.errstate(divide="ignore", invalid="ignore"):
        lg = np.where(s > 0, (6 * y2 * z2 + y2 * y2 + z2 * z2) * np.abs(np.log(s)) / 48, 0.0)
    return lg + (np.abs(y) ** 3 * np.abs(z) + np.abs(y) * np.abs(z) ** 3) * (np.pi / 2) / 6 \
        + 25 * y2 * z2 / 48


def _parallel_frame(c: _Conductors, a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, ...]:
    """lo, hi, dy, dz of parasite.extract.pairs._parallel (m)."""
    ua = c.u[a]
    rel0 = c.start[b] - c.start[a]
    x0 = np.einsum("ij,ij->i", rel0, ua)
    x1 = np.einsum("ij,ij->i", c.end[b] - c.start[a], ua)
    perp = rel0 - x0[:, None] * ua
    return (np.minimum(x0, x1), np.maximum(x0, x1), np.einsum("ij,ij->i", perp, c.w_dir[a]),
            np.einsum("ij,ij->i", perp, c.t_dir[a]))


def near_bar_pairs(c: _Conductors, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Which pairs the reference evaluates by the exact near sum of parallel bars:
    not far by FAR_RULES, parallel, both bars, closer than FAR_RATIO section sizes."""
    cos = np.einsum("ij,ij->i", c.u[a], c.u[b])
    dm = np.linalg.norm(c.mid[a] - c.mid[b], axis=1)
    gap = dm - 0.5 * (c.length[a] + c.length[b])
    clear = gap >= FAR_SECTION_RATIO * np.maximum(c.size[a], c.size[b])
    far = clear & (dm >= FAR_RULES[-1][0] * np.maximum(c.length[a], c.length[b]))
    par = np.linalg.norm(np.cross(c.u[a], c.u[b]), axis=1) < PARALLEL_SIN
    bars = ~c.round[a] & ~c.round[b]
    sel = (np.abs(cos) >= PERPENDICULAR_COS) & ~far & par & bars
    out = np.zeros(a.size, dtype=bool)
    if np.any(sel):
        _lo, _hi, dy, dz = _parallel_frame(c, a[sel], b[sel])
        h = np.maximum(np.maximum(c.width[a[sel]], c.width[b[sel]]),
                       np.maximum(c.thickness[a[sel]], c.thickness[b[sel]]))
        out[sel] = np.hypot(dy, dz) < FAR_RATIO * h
    return out


def near_bar_rounding(c: _Conductors, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Bound (H) of the rounding of the exact near sum of parallel bars for each pair
    (0 for pairs of other kinds): 4 U MU0/(4 pi) times the magnitudes of the cancelling
    terms (module docstring)."""
    out = np.zeros(a.size)
    sel = near_bar_pairs(c, a, b)
    if not np.any(sel):
        return out
    a, b = a[sel], b[sel]
    lo, hi, dy, dz = _parallel_frame(c, a, b)
    w1, t1, w2, t2 = c.width[a], c.thickness[a], c.width[b], c.thickness[b]
    area = w1 * t1 * w2 * t2
    yd = corner_differences(-w1 / 2, w1 / 2, dy - w2 / 2, dy + w2 / 2)
    zd = corner_differences(-t1 / 2, t1 / 2, dz - t2 / 2, dz + t2 / 2)
    lnrho_mag = _g_magnitude(yd[:, :, None], zd[:, None, :]).sum(axis=(1, 2)) / area
    rho_max = np.hypot(np.abs(dy) + (w1 + w2) / 2, np.abs(dz) + (t1 + t2) / 2)
    xstar = SERIES_RATIO * rho_max

    def cross(x: np.ndarray) -> np.ndarray:
        return _f_magnitude(x[:, None, None], yd[:, :, None], zd[:, None, :]).sum(axis=(1, 2))

    def series(x: np.ndarray) -> np.ndarray:
        xs = np.maximum(x, 1e-30)  # the series is 0 at x = 0
        return x * (np.abs(np.log(2 * xs)) + 1.0 + lnrho_mag) + rho_max**2 / xs

    x = np.abs(corner_differences(np.zeros(a.size), c.length[a], lo, hi))
    anchor = series(xstar) + cross(xstar) / area
    mag = np.zeros(a.size)
    for k in range(4):
        near = x[:, k] < xstar
        mag += np.where(near, cross(x[:, k]) / area + anchor, series(x[:, k]))
    out[sel] = 4 * U * MU0_4PI * mag
    return out


def _listed(arrays: SegmentArrays) -> tuple[_Conductors, np.ndarray, np.ndarray, np.ndarray]:
    """The near conductor pairs of a board as the compiled loop lists them, and the
    self inductance of the segment behind each conductor (images: their segment's)."""
    c, img, mz, diag = tables(arrays)
    n = len(arrays)
    _offsets, pa, pb = listed_near(c, img, mz, 0, n, n)
    owner = np.concatenate([np.arange(n), np.flatnonzero(img >= 0)])
    return c, pa, pb, np.abs(diag)[owner]


def _check(c: _Conductors, pa: np.ndarray, pb: np.ndarray, self_l: np.ndarray) -> np.ndarray:
    """Compiled = numpy within 1e-12 sqrt(L_aa L_bb) plus the rounding bound; returns
    the differences in units of that tolerance."""
    got = near_values(c, pa, pb)
    ref = near_values_numpy(c, pa, pb)
    tol = 1e-12 * np.sqrt(self_l[pa] * self_l[pb]) + near_bar_rounding(c, pa, pb)
    assert np.all(np.isfinite(got))
    ratio = np.abs(got - ref) / tol
    assert np.max(ratio) <= 1.0
    return ratio


@pytest.mark.parametrize("seed, planes", [(21, "none"), (22, "one"), (23, "two")])
def test_near_pairs_equal_numpy_on_random_boards(seed: int, planes: str) -> None:
    """Random boards (invented: traces at 0/45/90/any angle with bends, overlaps and
    crossings, via stacks, leads in space; no plane, one, two): every near pair of the
    compiled batch equals the numpy reference to rounding, every family present."""
    arrays = random_board(seed, n_traces=300, planes=planes)
    c, pa, pb, self_l = _listed(arrays)
    ratio = _check(c, pa, pb, self_l)
    out = np.empty(pa.size)
    done = np.zeros(pa.size, dtype=bool)
    near_kernels.near_batch(pa, pb, c.start, c.end, c.u, c.length, c.round, c.width,
                            c.thickness, c.radius, c.inner, c.w_dir, c.t_dir, c.size, out, done)
    par = np.linalg.norm(np.cross(c.u[pa], c.u[pb]), axis=1) < PARALLEL_SIN
    bar_near = near_bar_pairs(c, pa, pb)
    # the families the test must have met: inclined bars, exact near bars, parallel
    # bars in the filament form, and the pairs left to numpy (via stacks)
    assert np.count_nonzero(~par) > 100
    assert np.count_nonzero(bar_near) > 50
    assert np.count_nonzero(par & ~bar_near & ~c.round[pa] & ~c.round[pb]) > 5
    assert np.count_nonzero(~done) > 0
    left = ~done
    assert np.all(c.round[pa[left]] | c.round[pb[left]]) and np.all(par[left])
    assert ratio.size == pa.size


def _pair(segs: list[tuple]) -> SegmentArrays:
    """Segments (start, end, width, thickness, round, radius, inner) without planes."""
    start, end, width, thick, rnd, rad, inner = (list(v) for v in zip(*segs, strict=True))
    return _arrays(start, end, width, thick, rnd, rad, inner, [np.nan] * len(segs))


T = 35e-6
Z = 0.2e-3
A = ((0, 0, Z), (5e-3, 0, Z), 0.3e-3, T)  # the first bar of most cases (m)
CASES = {
    "collinear touching": [A, ((5e-3, 0, Z), (9e-3, 0, Z), 0.3e-3, T)],
    "collinear gap": [A, ((5.1e-3, 0, Z), (9e-3, 0, Z), 0.5e-3, T)],
    "overlapping": [A, ((2e-3, 0.1e-3, Z), (8e-3, 0.1e-3, Z), 0.5e-3, T)],
    "side by side": [A, ((1e-3, 0.4e-3, Z), (6e-3, 0.4e-3, Z), 0.2e-3, T)],
    "antiparallel": [A, ((6e-3, 0.4e-3, Z), (1e-3, 0.4e-3, Z), 0.2e-3, T)],
    "layers apart": [((0, 0, Z), (5e-3, 0, Z), 1e-3, T),
                     ((0, 0, 1.6e-3), (5e-3, 0, 1.6e-3), 1e-3, T)],
    "far parallel bars (filaments)": [A, ((0, 2.5e-3, Z), (5e-3, 2.5e-3, Z), 0.2e-3, T)],
    "bend 45 touching": [A, ((5e-3, 0, Z), (8e-3, 3e-3, Z), 0.3e-3, T)],
    "bend 135 touching": [A, ((5e-3, 0, Z), (2e-3, 3e-3, Z), 0.5e-3, T)],
    "inclined crossing layers": [A, ((1e-3, -2e-3, 1.6e-3), (4e-3, 2e-3, 1.6e-3), 0.3e-3, T)],
    "inclined near": [A, ((1e-3, 0.5e-3, Z), (4e-3, 1.5e-3, Z), 0.3e-3, T)],
    "perpendicular": [A, ((5e-3, 0, Z), (5e-3, 3e-3, Z), 0.3e-3, T)],
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_near_pair_cases(name: str) -> None:
    """Hand-placed pairs of bars (invented): collinear touching or with a gap,
    overlapping, side by side, antiparallel, on two layers, bends touching at 45 and 135
    degrees, inclined on one layer and across layers, perpendicular (exactly 0)."""
    segs = [(s, e, w, t, False, 0.0, 0.0) for s, e, w, t in CASES[name]]
    arrays = _pair(segs)
    c, pa, pb, self_l = _listed(arrays)
    if name == "perpendicular":
        assert pa.size == 0  # listed as exactly 0, never near
        return
    assert pa.size == 1
    _check(c, pa, pb, self_l)


def test_round_conductor_pairs() -> None:
    """Round conductors (invented): two parallel wires near each other (filaments with
    the fourth-order section term), a wire along a bar farther than FAR_RATIO sections
    (filaments), a wire close along a bar and a coaxial via stack (both left to numpy),
    an inclined wire over a bar (filaments over both sections)."""
    r = 0.15e-3
    segs = [
        ((0, 0, 1e-3), (0, 0, 2e-3), 2 * r, 2 * r, True, r, 0.125e-3),
        ((0, 0, 2e-3), (0, 0, 3e-3), 2 * r, 2 * r, True, r, 0.125e-3),  # coaxial stack
        ((1e-3, 0, 1e-3), (1e-3, 0, 2.5e-3), 2 * r, 2 * r, True, 0.2e-3, 0.0),
        ((0, 0, Z), (5e-3, 0, Z), 0.3e-3, T, False, 0.0, 0.0),
        ((0, 0.6e-3, Z + 0.5e-3), (5e-3, 0.6e-3, Z + 0.5e-3), 0.5e-3, 0.5e-3, True, 0.25e-3, 0.0),
        ((0, 4e-3, Z), (5e-3, 4e-3, Z), 0.3e-3, 0.3e-3, True, 0.15e-3, 0.0),
        ((1e-3, -1e-3, 1e-3), (4e-3, 2e-3, 3e-3), 0.4e-3, 0.4e-3, True, 0.2e-3, 0.0),
    ]
    arrays = _pair(segs)
    c, pa, pb, self_l = _listed(arrays)
    _check(c, pa, pb, self_l)
    out = np.empty(pa.size)
    done = np.zeros(pa.size, dtype=bool)
    near_kernels.near_batch(pa, pb, c.start, c.end, c.u, c.length, c.round, c.width,
                            c.thickness, c.radius, c.inner, c.w_dir, c.t_dir, c.size, out, done)
    pairs = {(int(a), int(b)): bool(d) for a, b, d in zip(pa, pb, done, strict=True)}
    assert pairs[(0, 1)] is False  # coaxial: numpy
    assert pairs[(3, 4)] is False  # wire close along a bar: numpy
    assert pairs[(0, 2)] is True  # parallel wires: compiled
    assert pairs[(3, 5)] is True  # wire far along a bar: compiled
    assert any(d for (a, b), d in pairs.items() if 6 in (a, b))  # inclined wire
