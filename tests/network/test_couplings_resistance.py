"""Coupling selection keeps the written matrix positive definite; resistance
and skin depth against standards and handbook values."""

from __future__ import annotations

import math

import numpy as np
import pytest

from geometry.model import Copper, SegmentArrays
from parasite.errors import ExtractionError
from parasite.extract.resistance import resistances, skin_depth
from parasite.network.couplings import choose_couplings, format_k, written_matrix
from tests.reference import gmd_rectangle, mutual_parallel_filaments, self_straight_gmd


def _parallel_traces(n: int, pitch: float, length: float = 20e-3, width: float = 0.2e-3) -> np.ndarray:
    """Inductance matrix of n parallel, aligned traces from Grover's filament
    and GMD formulas (Grover 1946, ch. 5): an independent, positive definite
    matrix with slowly decaying couplings, the hard case for pruning."""
    x = np.arange(n) * pitch
    L = np.empty((n, n))
    for a in range(n):
        for b in range(n):
            L[a, b] = (self_straight_gmd(length, gmd_rectangle(width, 35e-6)) if a == b
                       else mutual_parallel_filaments(length, abs(x[a] - x[b])))
    return L


@pytest.mark.parametrize("threshold", [0.02, 0.05, 0.1, 0.2, 0.3, 0.5, 0.7])
@pytest.mark.parametrize("pitch", [0.3e-3, 1e-3, 5e-3])
def test_written_matrix_is_positive_definite(threshold: float, pitch: float) -> None:
    """Whatever the threshold, the matrix exactly as written (rounded k,
    pruned, possibly compensated) has a positive smallest eigenvalue (checked
    with numpy's eigvalsh, independently of the code's own check), and every
    written coupling reproduces the full matrix's mutual term to 1e-9."""
    L = _parallel_traces(30, pitch)
    s = choose_couplings(L, threshold)
    Lw = written_matrix(s.self_inductance, s.i, s.j, np.array([float(format_k(k)) for k in s.k]))
    assert np.linalg.eigvalsh(Lw)[0] > 0
    assert s.min_eigenvalue > 0
    np.testing.assert_allclose(Lw[s.i, s.j], L[s.i, s.j], rtol=1e-9)
    assert np.all(np.abs(s.k) < 1)
    assert s.kept + s.dropped == 30 * 29 // 2


def test_pruning_that_breaks_definiteness_is_compensated() -> None:
    """30 traces at 0.3 mm pitch keeping only |k| >= 0.5: plain pruning is
    indefinite (ngspice-facts notes measured the same effect); the selection
    says so and compensates."""
    L = _parallel_traces(30, 0.3e-3)
    i, j = np.triu_indices(30, 1)
    d = np.sqrt(np.diag(L))
    k = L[i, j] / (d[i] * d[j])
    keep = np.abs(k) >= 0.5
    assert np.linalg.eigvalsh(written_matrix(np.diag(L), i[keep], j[keep], k[keep]))[0] < 0
    s = choose_couplings(L, 0.5)
    assert "compensation" in s.method and "Gershgorin" in s.note
    assert np.all(s.self_inductance >= np.diag(L))


def test_not_positive_definite_input_is_an_error() -> None:
    L = np.array([[1e-9, 2e-9], [2e-9, 1e-9]])
    with pytest.raises(ExtractionError, match="not positive definite"):
        choose_couplings(L, 0.01)


def _bar(length: float, width: float, thickness: float) -> SegmentArrays:
    one = np.ones(1)
    return SegmentArrays(
        start=np.zeros((1, 3)), end=np.array([[length, 0.0, 0.0]]), width=width * one,
        thickness=thickness * one, round=np.zeros(1, bool), radius=0 * one, inner_radius=0 * one,
        net_index=np.zeros(1, int), node_from=np.zeros(1, int), node_to=np.ones(1, int),
        mirror_z=np.full(1, np.nan))


def test_dc_resistance_iec_60028() -> None:
    """IEC 60028 (1925): annealed copper, 1 m of 1 mm^2 at 20 degC is
    1/58 ohm = 0.017241 ohm; at 85 degC it is larger by 1 + 0.00393 * 65."""
    a = _bar(1.0, 1e-3, 1e-3)
    assert resistances(a, Copper())[0] == pytest.approx(1 / 58, rel=1e-4)
    assert resistances(a, Copper(temperature=85.0))[0] == pytest.approx(1 / 58 * (1 + 0.00393 * 65), rel=1e-4)


@pytest.mark.parametrize(("f", "delta_um"), [(1e6, 66.0), (10e6, 20.9), (100e6, 6.6)])
def test_skin_depth_of_copper(f: float, delta_um: float) -> None:
    """Skin depth of copper: 66 um at 1 MHz, 20.9 um at 10 MHz, 6.6 um at
    100 MHz (H. W. Ott, *Electromagnetic Compatibility Engineering*, 2009,
    Table 6-1 gives 0.0026 in at 1 MHz; the others scale as 1/sqrt(f);
    values recalled from memory, so the tolerance is 1.5%)."""
    assert skin_depth(1.7241e-8, f) * 1e6 == pytest.approx(delta_um, rel=0.015)


def test_skin_effect_resistance_of_a_wide_bar() -> None:
    """A bar much wider and thicker than the skin depth carries its current in
    a shell delta deep: R -> rho l / (2 delta (w + t)) (Paul, *Introduction to
    Electromagnetic Compatibility*, 2nd ed., 2006, sec. 4.2), to the order of
    delta/t. At DC it is rho l / (w t)."""
    w, t, f = 5e-3, 1e-3, 100e6
    a = _bar(0.1, w, t)
    delta = math.sqrt(1.7241e-8 / (math.pi * f * 4e-7 * math.pi))
    r_hf = 1.7241e-8 * 0.1 / (2 * delta * (w + t))
    assert resistances(a, Copper(), f)[0] == pytest.approx(r_hf, rel=2 * 2 * delta / t)
    assert resistances(a, Copper(), None)[0] == pytest.approx(1.7241e-8 * 0.1 / (w * t), rel=1e-12)
