"""The compiled pair loops (parasite.extract.kernels) against the numpy arrangement of
the same formulas (parasite.extract.matrix_numpy, the production path before them),
and their far rule against Neumann's double integral by scipy.

The formulas themselves are checked against published results in
test_extract_matrix.py, test_extract_bars.py, test_extract_round.py and
test_extract_inclined.py (unchanged); here the claim is that compiling them changed
nothing but rounding: every entry within 1e-12 of sqrt(L_ii L_jj) (the Cauchy-Schwarz
bound of a mutual term; entries where a segment and its image nearly cancel are
small differences of large terms, so a bound relative to the entry itself would
measure the cancellation, not the kernels), plus, for entries with exact near
parallel-bar terms (compiled since, parasite.extract.near_kernels), the rounding
estimate of that cancelling sum (tests/extract/test_near_kernels.py).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import dblquad

import parasite.extract.matrix as matrix
from geometry.model import SegmentArrays
from parasite.extract import inductance_matrix, kernels
from parasite.extract.matrix import tables
from parasite.extract.matrix_numpy import inductance_matrix_numpy
from parasite.extract.pairs import _conductors
from tests.extract.test_extract_matrix import random_board
from tests.extract.test_near_kernels import near_bar_rounding


@pytest.mark.parametrize("seed, planes", [(11, "none"), (12, "one"), (13, "two")])
def test_compiled_equals_numpy_reference(seed: int, planes: str) -> None:
    """Random boards (invented geometry, ~300-400 segments with vias and leads, no plane,
    one plane, two planes): compiled = numpy to 1e-12 of sqrt(L_ii L_jj); symmetric."""
    arrays = random_board(seed, n_traces=300, planes=planes)
    fast = inductance_matrix(arrays)
    ref = inductance_matrix_numpy(arrays)
    scale = np.sqrt(np.outer(np.diag(ref), np.diag(ref)))
    assert np.array_equal(fast, fast.T)
    tol = 1e-12 * scale + _entry_rounding(arrays)
    assert np.max(np.abs(fast - ref) / tol) < 1.0


def _entry_rounding(arrays: SegmentArrays) -> np.ndarray:
    """Rounding estimate (H) of each entry from its near parallel-bar terms (direct, and
    half of each image term): the exact bar sum cancels digits, so the compiled and the
    numpy evaluation differ by more than 1e-12 there (tests/extract/test_near_kernels.py)."""
    c, img, _mz, _diag = tables(arrays)
    n = len(arrays)
    ii, jj = np.triu_indices(n, 1)
    out = near_bar_rounding(c, ii, jj)
    for a, b in ((ii, img[jj]), (img[ii], jj)):
        has = (a >= 0) & (b >= 0)
        part = np.zeros(ii.size)
        part[has] = near_bar_rounding(c, a[has], b[has])
        out += 0.5 * part
    full = np.zeros((n, n))
    full[ii, jj] = out
    return full + full.T


def test_chunks_change_only_rounding(monkeypatch: pytest.MonkeyPatch) -> None:
    """Rows in many small chunks (many progress calls) give the same matrix as in one,
    to rounding (numpy's vector loops may round the last bit differently at other
    array lengths: 4e-15 of sqrt(L_ii L_jj))."""
    arrays = random_board(14, n_traces=120, planes="two")
    one = inductance_matrix(arrays)
    monkeypatch.setattr(matrix, "CHUNK_PAIRS", 500)
    calls: list[tuple[int, int]] = []
    many = inductance_matrix(arrays, progress=lambda d, t: calls.append((d, t)))
    scale = np.sqrt(np.outer(np.diag(one), np.diag(one)))
    assert np.max(np.abs(one - many) / scale) < 4e-15
    n = len(arrays)
    assert len(calls) > 5 and calls[-1] == (n * (n + 1) // 2, n * (n + 1) // 2)


def _neumann(pa, qa, pb, qb) -> float:
    """Neumann's formula mu0/(4 pi) int int dl_a . dl_b / r for two filaments (H), by
    scipy's adaptive quadrature (Neumann 1845; e.g. Paul, Inductance: Loop and Partial,
    2010, eq. 5.9)."""
    da, db = qa - pa, qb - pb

    def f(t: float, s: float) -> float:
        return 1.0 / np.linalg.norm(pa + s * da - pb - t * db)

    val, _ = dblquad(f, 0.0, 1.0, 0.0, 1.0, epsabs=0, epsrel=1e-12)
    return 1e-7 * float(da @ db) * val


def test_far_rule_against_neumann_integral() -> None:
    """Far pairs of thin round wires (radius 1 um, section correction negligible) at
    random angles and distances: the compiled far rule against the double integral.
    Tolerance 1e-4: the bound the far rules are chosen for (parasite.extract.pairs
    FAR_RULES, worst 8e-5)."""
    rng = np.random.default_rng(5)
    starts, ends = [], []
    for _ in range(40):
        p = rng.uniform(-20e-3, 20e-3, 3)
        starts.append(p)
        ends.append(p + rng.normal(size=3) * 3e-3)
    start, end = np.array(starts), np.array(ends)
    n = len(start)
    r = np.full(n, 1e-6)
    c = _conductors(start, end, 2 * r, 2 * r, np.ones(n, bool), r, np.zeros(n))
    checked = 0
    for a in range(n):
        for b in range(a + 1, n):
            rule = kernels.classify(a, b, c.u, c.mid, c.length, c.size)
            if rule < 0:
                continue
            got = kernels.far_value(rule, a, b, c.mid, c.d, c.w_dir, c.t_dir, c.width,
                                    c.thickness)
            ref = _neumann(start[a], end[a], start[b], end[b])
            assert got == pytest.approx(ref, rel=1e-4, abs=1e-6 * abs(ref) + 1e-18)
            checked += 1
            if checked >= 60:
                return
    assert checked > 20
