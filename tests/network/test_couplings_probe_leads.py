"""Which couplings are written when probe leads are present: every coupling of
a lead, exactly, and a written matrix that stays positive definite. The
matrices are built from Neumann's formula for parallel filaments (Grover,
*Inductance Calculations*, 1946, ch. 5, eq. (1); tests/reference.py), so that
they are physical inductance matrices."""

from __future__ import annotations

import numpy as np
import pytest

from parasite.network.couplings import select_couplings, smallest_eigenvalue, written_matrix
from tests.reference import mutual_parallel_filaments, self_straight_gmd


def _matrix(distances_mm: list[float], length: float = 0.02, gmd: float = 2e-4) -> np.ndarray:
    """Parallel, aligned 20 mm conductors at positions x (mm) along a line."""
    x = np.asarray(distances_mm) * 1e-3
    n = len(x)
    L = np.empty((n, n))
    for i in range(n):
        for j in range(n):
            d = abs(x[i] - x[j])
            L[i, j] = self_straight_gmd(length, gmd) if i == j else mutual_parallel_filaments(length, d)
    return L


@pytest.mark.parametrize("threshold", [0.02, 0.3, 0.6])
def test_every_lead_coupling_is_written_exactly(threshold: float) -> None:
    """Eight conductors 0.5 mm apart (the circuit) and a lead 40 mm away: the
    lead's couplings (k about 0.1) are written whatever the threshold, their
    mutual terms as in L (to the 11 written digits); the written matrix is
    positive definite."""
    L = _matrix([0, 0.5, 1, 1.5, 2, 2.5, 3, 3.5, 40])
    leads = np.zeros(9, dtype=bool)
    leads[8] = True
    sel = select_couplings(L, threshold, leads)
    pairs = {(int(i), int(j)) for i, j in zip(sel.i, sel.j, strict=True)}
    assert {(k, 8) for k in range(8)} <= pairs
    Lw = written_matrix(sel.self_inductance, sel.i, sel.j, sel.k)
    np.testing.assert_allclose(Lw[:8, 8], L[:8, 8], rtol=1e-9)
    assert sel.min_eigenvalue > 0 and smallest_eigenvalue(Lw) > 0
    k_lead = L[:8, 8] / np.sqrt(np.diag(L)[:8] * L[8, 8])
    if threshold > np.abs(k_lead).max():
        assert "probe leads written whatever their |k|" in sel.note


def test_without_leads_it_is_the_plain_selection() -> None:
    from parasite.network.couplings import choose_couplings

    L = _matrix([0, 1, 2, 30])
    a = select_couplings(L, 0.05, np.zeros(4, dtype=bool))
    b = choose_couplings(L, 0.05)
    assert np.array_equal(a.i, b.i) and np.array_equal(a.k, b.k)
