"""The assembled inductance matrix: contract over every pair kind (symmetry, positive
diagonal, |k| < 1, positive definiteness, invariances, subdivision), images against a
published microstrip formula, and the far-pair quadrature against the closed forms."""

from __future__ import annotations

import numpy as np
import pytest

from geometry.model import SegmentArrays
from parasite.errors import ExtractionError
from parasite.extract import inductance_matrix, self_inductances
from parasite.extract.inclined import inclined_mutual
from parasite.extract.pairs import FAR_RULES, _conductors, _mutual
from parasite.network.couplings import choose_couplings


def _arrays(start: list, end: list, width: list, thickness: list, rnd: list, radius: list,
            inner: list, mirror: list) -> SegmentArrays:
    n = len(start)
    return SegmentArrays(
        start=np.array(start, float).reshape(n, 3), end=np.array(end, float).reshape(n, 3),
        width=np.array(width, float), thickness=np.array(thickness, float),
        round=np.array(rnd, bool), radius=np.array(radius, float),
        inner_radius=np.array(inner, float), net_index=np.zeros(n, int),
        node_from=np.arange(n), node_to=np.arange(n) + n, mirror_z=np.array(mirror, float))


def random_board(seed: int, n_traces: int = 40, planes: str = "one") -> SegmentArrays:
    """Invented test geometry: polylines at 0/45/90/arbitrary angles on two layers, vias
    (plated and solid) through both, and probe leads (round wires in space at random
    directions); ``planes``: "none", "one" (all mirror in z = 0) or "two" (layer 2 and
    the vias in z = 0, layer 1 and the leads in a plane face at z = 2.0 mm)."""
    rng = np.random.default_rng(seed)
    start, end, width, thick, rnd, rad, inner, layer = [], [], [], [], [], [], [], []
    t = 35e-6
    zs = [1.565e-3 + t / 2, 0.2e-3 + t / 2]
    while len(start) < n_traces:
        p = rng.uniform(0, 30e-3, 2)
        ang = rng.choice([0.0, np.pi / 4, np.pi / 2, rng.uniform(0, np.pi)])
        w = rng.choice([0.2e-3, 0.5e-3, 1.5e-3])
        k = int(rng.integers(2))
        for _ in range(int(rng.integers(2, 6))):
            q = p + rng.uniform(1e-3, 6e-3) * np.array([np.cos(ang), np.sin(ang)])
            start.append([p[0], p[1], zs[k]])
            end.append([q[0], q[1], zs[k]])
            width.append(w), thick.append(t), rnd.append(False), rad.append(0.0)
            inner.append(0.0), layer.append(k)
            p = q
            ang += rng.choice([0.0, np.pi / 4, -np.pi / 4, np.pi / 2, rng.uniform(-1, 1)])
    for _ in range(6):  # vias: stacks of two pieces through both layers
        xy = rng.uniform(0, 30e-3, 2)
        r, ri = (0.15e-3, 0.125e-3) if rng.random() < 0.5 else (0.2e-3, 0.0)
        zmid = 0.9e-3
        for z0, z1 in [(zs[1], zmid), (zmid, zs[0])]:
            start.append([xy[0], xy[1], z0]), end.append([xy[0], xy[1], z1])
            width.append(2 * r), thick.append(2 * r), rnd.append(True), rad.append(r)
            inner.append(ri), layer.append(2)
    for _ in range(3):  # probe leads in space
        a = np.append(rng.uniform(0, 30e-3, 2), rng.uniform(3e-3, 10e-3))
        b = a + rng.normal(size=3) * 5e-3
        b[2] = max(b[2], 3e-3)
        start.append(list(a)), end.append(list(b))
        width.append(1e-3), thick.append(1e-3), rnd.append(True), rad.append(0.5e-3)
        inner.append(0.0), layer.append(3)
    lay = np.array(layer)
    if planes == "none":
        mirror = np.full(len(start), np.nan)
    elif planes == "one":
        mirror = np.zeros(len(start))
    else:
        mirror = np.where((lay == 0) | (lay == 3), 2.0e-3, 0.0)
    return _arrays(start, end, width, thick, rnd, rad, inner, list(mirror))


@pytest.mark.parametrize("seed, planes", [(1, "none"), (2, "one"), (3, "two"), (4, "one")])
def test_contract_random_boards(seed: int, planes: str) -> None:
    """Contract over every pair kind (bars at any angle, touching bends, vias, via
    stacks, leads in space, images in one or two planes): exact symmetry, positive
    diagonal, |k| < 1, positive definite (Cholesky), and the coupling selection writes a
    positive definite matrix."""
    arrays = random_board(seed, planes=planes)
    L = inductance_matrix(arrays)
    assert np.array_equal(L, L.T)
    d = np.diag(L)
    assert np.all(d > 0)
    k = L / np.sqrt(np.outer(d, d))
    np.fill_diagonal(k, 0.0)
    assert np.max(np.abs(k)) < 1.0
    np.linalg.cholesky(L)
    sel = choose_couplings(L, 0.05)
    assert sel.min_eigenvalue > 0


def test_invariance_translation_and_rotation() -> None:
    """Moving the whole board (with its plane) or turning it about a vertical axis leaves
    every entry unchanged (to 1e-9 of the largest self term: rounding of coordinates)."""
    arrays = random_board(5, planes="one")
    L = inductance_matrix(arrays)
    shift = np.array([0.3, -0.2, 0.01])
    moved = _arrays(arrays.start + shift, arrays.end + shift, arrays.width, arrays.thickness,
                    arrays.round, arrays.radius, arrays.inner_radius,
                    list(arrays.mirror_z + shift[2]))
    a = 0.7
    rot = np.array([[np.cos(a), -np.sin(a), 0], [np.sin(a), np.cos(a), 0], [0, 0, 1]])
    turned = _arrays(arrays.start @ rot.T, arrays.end @ rot.T, arrays.width, arrays.thickness,
                     arrays.round, arrays.radius, arrays.inner_radius, list(arrays.mirror_z))
    scale = np.max(np.diag(L))
    for other in (moved, turned):
        assert np.max(np.abs(inductance_matrix(other) - L)) <= 1e-9 * scale


def test_subdivision_invariance() -> None:
    """Cutting a conductor into pieces and summing the block of the matrix gives the whole
    conductor's self inductance (partial inductances add: Ruehli 1972): a trace cut in
    three (with and without a plane) and a plated via cut in three (with its image).
    Tolerance 1e-4, the accuracy of the far-pair quadrature."""
    def bar(cuts: list[float], mirror: float) -> SegmentArrays:
        n = len(cuts) - 1
        return _arrays([[c, 0, 0.3e-3] for c in cuts[:-1]], [[c, 0, 0.3e-3] for c in cuts[1:]],
                       [0.3e-3] * n, [35e-6] * n, [False] * n, [0.0] * n, [0.0] * n,
                       [mirror] * n)

    def via(cuts: list[float]) -> SegmentArrays:
        n = len(cuts) - 1
        return _arrays([[0, 0, c] for c in cuts[:-1]], [[0, 0, c] for c in cuts[1:]],
                       [0.3e-3] * n, [0.3e-3] * n, [True] * n, [0.15e-3] * n,
                       [0.125e-3] * n, [-0.1e-3] * n)

    for mirror in (np.nan, 0.0):
        whole = inductance_matrix(bar([0, 10e-3], mirror))[0, 0]
        assert inductance_matrix(bar([0, 3e-3, 7e-3, 10e-3], mirror)).sum() == pytest.approx(
            whole, rel=1e-4, abs=0)
    whole = inductance_matrix(via([0, 1.6e-3]))[0, 0]
    assert inductance_matrix(via([0, 0.5e-3, 1.0e-3, 1.6e-3])).sum() == pytest.approx(
        whole, rel=1e-4, abs=0)


def test_perpendicular_is_exactly_zero() -> None:
    """Bars sharing a corner at 90 degrees (and their images), a via and a trace: exactly 0
    (Neumann's formula has the factor u_a . u_b)."""
    arrays = _arrays([[0, 0, 1e-3], [5e-3, 0, 1e-3], [2e-3, 3e-3, 0.5e-3]],
                     [[5e-3, 0, 1e-3], [5e-3, 4e-3, 1e-3], [2e-3, 3e-3, 1.5e-3]],
                     [0.5e-3, 0.5e-3, 0.3e-3], [35e-6, 35e-6, 0.3e-3], [False, False, True],
                     [0, 0, 0.15e-3], [0, 0, 0], [0.0, 0.0, 0.0])
    L = inductance_matrix(arrays)
    assert L[0, 1] == 0.0 and L[0, 2] == 0.0 and L[1, 2] == 0.0


def _hammerstad_jensen_l(u: float) -> float:
    """Hammerstad & Jensen, 'Accurate models for microstrip computer-aided design', IEEE
    MTT-S Int. Microwave Symp. Digest, 1980: Z01(u) = eta0/(2 pi) ln(f(u)/u + sqrt(1 + 4/u^2)),
    f(u) = 6 + (2 pi - 6) exp(-(30.666/u)^0.7528), zero thickness, eps_r = 1 (stated
    accuracy 0.03% for u <= 1000; coefficients recalled from memory). L' = Z01 / c (H/m)."""
    f = 6 + (2 * np.pi - 6) * np.exp(-((30.666 / u) ** 0.7528))
    z0 = 376.730313 / (2 * np.pi) * np.log(f / u + np.sqrt(1 + 4 / u**2))
    return float(z0 / 299792458.0)


@pytest.mark.parametrize("u", [0.1, 0.5, 1.0, 2.0, 5.0])
def test_bar_over_plane_against_microstrip(u: float) -> None:
    """A long thin bar at height h over a return plane (method of images) against
    Hammerstad & Jensen (1980) with eps_r = 1 (L' = Z0/c), per unit length from two
    lengths (end effects cancel). Uniform current over the width is not the TEM current
    (which crowds to the edges), so L' comes out higher, by at most the difference of the
    strip's self term: (mu0/2 pi) ln(0.25/0.22313) = 22.8 nH/m, the log of the ratio of the
    GMD of the TEM edge-crowded strip current (w/4, the equivalent radius of a flat strip)
    to that of a uniform strip (0.22313 w, Rosa & Grover 1912). Expected: 0 < L' - L'_HJ
    <= 22.8 nH/m (H-J's own 0.03% added)."""
    h = 1e-3
    w, t = u * h, 1e-6
    length = 400 * max(h, w)

    def one(l_: float) -> float:
        a = _arrays([[0, 0, h + t / 2]], [[l_, 0, h + t / 2]], [w], [t], [False], [0.0], [0.0],
                    [0.0])
        return float(inductance_matrix(a)[0, 0])

    lp = (one(2 * length) - one(length)) / length
    ref = _hammerstad_jensen_l(u)
    excess = lp - ref
    assert 0 < excess <= 2e-7 * np.log(0.25 / 0.22313) + 3e-4 * ref


def test_far_pair_quadrature_against_closed_forms() -> None:
    """Pairs that the assembly sends to line quadrature (:data:`FAR_RULES`, section
    correction) against the closed-form path (Neumann's formula over 4 x 4 Gauss-Legendre
    filaments per section): relative error <= 1e-4 for pairs whose directions are not
    nearly perpendicular, and <= 1e-5 of sqrt(L_a L_b) for all."""
    rng = np.random.default_rng(11)
    n = 3000
    ua = rng.normal(size=(n, 3))
    ua[: n // 2, 2] = 0.0  # half of them horizontal bars
    ua /= np.linalg.norm(ua, axis=1)[:, None]
    ub = np.where(rng.random((n, 1)) < 0.3, ua, rng.normal(size=(n, 3)))
    ub[: n // 2, 2] = 0.0
    ub /= np.linalg.norm(ub, axis=1)[:, None]
    la, lb = rng.uniform(1e-3, 8e-3, n), rng.uniform(1e-3, 8e-3, n)
    ratio = rng.choice([r for r, _ in FAR_RULES], n) * rng.uniform(1.0, 1.3, n)
    dirm = np.where(rng.random((n, 1)) < 0.2, ua, rng.normal(size=(n, 3)))
    dirm /= np.linalg.norm(dirm, axis=1)[:, None]
    mid_b = dirm * (ratio * np.maximum(la, lb))[:, None]
    sa, ea = -0.5 * la[:, None] * ua, 0.5 * la[:, None] * ua
    sb, eb = mid_b - 0.5 * lb[:, None] * ub, mid_b + 0.5 * lb[:, None] * ub
    w = rng.uniform(0.1e-3, 0.4e-3, (n, 2))
    c = _conductors(np.concatenate([sa, sb]), np.concatenate([ea, eb]),
                    np.concatenate([w[:, 0], w[:, 1]]), np.full(2 * n, 35e-6),
                    np.zeros(2 * n, bool), np.zeros(2 * n), np.zeros(2 * n))
    ia, ib = np.arange(n), np.arange(n) + n
    got = _mutual(c, ia, ib)
    ref = inclined_mutual(c.start[ia], c.end[ia], c.w_dir[ia], c.t_dir[ia], c.width[ia],
                          c.thickness[ia], c.start[ib], c.end[ib], c.w_dir[ib], c.t_dir[ib],
                          c.width[ib], c.thickness[ib], np.full(n, 4))
    par = np.abs(np.abs(np.einsum("ij,ij->i", ua, ub)) - 1) < 1e-12
    # the closed-form path for exactly parallel pairs is the parallel formula
    assert np.isfinite(got).all()
    ls = self_inductances(_arrays(list(c.start), list(c.end), list(c.width), list(c.thickness),
                                  [False] * 2 * n, [0.0] * 2 * n, [0.0] * 2 * n,
                                  [np.nan] * 2 * n))
    scale = np.sqrt(ls[ia] * ls[ib])
    ok = ~par
    assert np.max(np.abs(got - ref)[ok] / scale[ok]) <= 1e-5
    big = ok & (np.abs(np.einsum("ij,ij->i", ua, ub)) > 0.05)
    assert np.max(np.abs(got - ref)[big] / np.abs(ref[big])) <= 1e-4


def test_progress_and_errors() -> None:
    """progress(done, total) ends at the number of pairs i <= j; a zero-length segment is
    an ExtractionError naming the segment."""
    arrays = random_board(6, n_traces=12, planes="none")
    calls: list[tuple[int, int]] = []
    inductance_matrix(arrays, progress=lambda d, t: calls.append((d, t)))
    n = len(arrays)
    assert calls[-1] == (n * (n + 1) // 2, n * (n + 1) // 2)
    bad = _arrays([[0, 0, 0], [1e-3, 0, 0]], [[1e-3, 0, 0], [1e-3, 0, 0]], [1e-4, 1e-4],
                  [1e-5, 1e-5], [False, False], [0, 0], [0, 0], [np.nan, np.nan])
    with pytest.raises(ExtractionError, match=r"segment 1 has zero length"):
        inductance_matrix(bad)


def test_lead_along_trace_either_order() -> None:
    """A probe lead lying along a trace, listed before or after it (and antiparallel):
    the same mutual term up to sign, equal to filaments over both sections
    (checked against cubature in test_extract_round.py). Tolerance 1e-12."""
    from parasite.extract.round import parallel_bar_round

    trace = ([0, 0, 1e-3], [10e-3, 0, 1e-3], 1e-3, 35e-6, False, 0.0)
    lead = ([2e-3, 0.2e-3, 1.7e-3], [9e-3, 0.2e-3, 1.7e-3], 1e-3, 1e-3, True, 0.5e-3)
    lead_rev = (lead[1], lead[0], *lead[2:])

    def mutual(first: tuple, second: tuple) -> float:
        segs = [first, second]
        arr = _arrays([s[0] for s in segs], [s[1] for s in segs], [s[2] for s in segs],
                      [s[3] for s in segs], [s[4] for s in segs], [s[5] for s in segs],
                      [0.0, 0.0], [np.nan, np.nan])
        return float(inductance_matrix(arr)[0, 1])

    ref = parallel_bar_round(0.0, 10e-3, 2e-3, 9e-3, 0.2e-3, 0.7e-3, 1e-3, 35e-6, 0.5e-3,
                             0.0)[0]
    assert mutual(trace, lead) == pytest.approx(ref, rel=1e-12, abs=0)
    assert mutual(lead, trace) == pytest.approx(ref, rel=1e-12, abs=0)
    assert mutual(lead_rev, trace) == pytest.approx(-ref, rel=1e-12, abs=0)
