"""Loop-to-loop mutual inductance from segment currents (parasite.field.mutual)
against published formulas, over the project's own partial inductance matrix."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import ellipe, ellipk

from parasite.errors import ParasiteError
from parasite.extract import inductance_matrix
from parasite.field import coupling_matrix, loop_coupling, mutual_impedance
from tests.field.shapes import circle, polygons, rectangle
from tests.reference import MU0, gmd_rectangle, mutual_coplanar_polygons, self_straight_gmd


def maxwell_coaxial(a: float, b: float, d: float) -> float:
    """Mutual inductance (H) of two coaxial circular filaments of radii a, b (m),
    d (m) apart: Maxwell's formula, M = mu0 sqrt(ab) [(2/k - k) K(k) - (2/k) E(k)],
    k^2 = 4ab / ((a + b)^2 + d^2) (Grover, *Inductance Calculations*, 1946, ch. 13,
    eq. (1); Maxwell, *Treatise*, 1873, art. 701). scipy's ellipk/ellipe take m = k^2."""
    m = 4 * a * b / ((a + b) ** 2 + d * d)
    k = math.sqrt(m)
    return MU0 * math.sqrt(a * b) * ((2 / k - k) * ellipk(m) - 2 / k * ellipe(m))


@pytest.mark.parametrize("a, b, d", [(10e-3, 10e-3, 5e-3), (10e-3, 15e-3, 0.0), (5e-3, 20e-3, 10e-3)])
def test_coaxial_polygons_converge_to_maxwell(a: float, b: float, d: float) -> None:
    """Two coaxial circular loops as regular polygons of thin round wire (50 um
    radius) with 32, 64 and 128 sides: M from the partial inductance matrix and
    the loops' currents approaches Maxwell's formula (Grover 1946, ch. 13) as the
    polygons are refined, and is within 0.5% at 128 sides (the inscribed polygon's
    error falls like 1/N^2; the wire's section changes M by about (r/D)^2 < 1e-4)."""
    exact = maxwell_coaxial(a, b, d)
    errors = []
    for n in (32, 64, 128):
        arrays, cur = polygons([circle(a, n, 0.0), circle(b, n, d)], radius=50e-6)
        L = inductance_matrix(arrays)
        c = loop_coupling(L, cur[0], cur[1])
        errors.append(abs(c.mutual / exact - 1))
        assert c.shared == 0.0 and c.flux == pytest.approx(c.mutual, rel=1e-15)
        assert c.quadrature == 0.0
    assert errors[0] > errors[1] > errors[2]
    assert errors[2] < 0.005


@pytest.mark.parametrize("p, q", [
    (rectangle(0, 0, 20e-3, 10e-3), rectangle(23e-3, 1e-3, 38e-3, 9e-3)),  # side by side
    (rectangle(0, 0, 30e-3, 20e-3), rectangle(10e-3, 7e-3, 20e-3, 13e-3)),  # nested
    (rectangle(0, 0, 30e-3, 20e-3), rectangle(25e-3, 15e-3, 45e-3, 30e-3)),  # overlapping
])
def test_coplanar_rectangles_against_grover(p: np.ndarray, q: np.ndarray) -> None:
    """Two coplanar rectangles of thin round wire (50 um radius): M from the matrix
    within 0.2% of Neumann's formula summed over pairs of parallel sides
    (Grover 1946, ch. 5, parallel filaments with offset; tests/reference.py; the
    wire's section against filaments: (r/D)^2 below 1e-3 at the closest 2 mm);
    k = M / sqrt(L1 L2) from the loops' own values."""
    arrays, cur = polygons([p, q], radius=50e-6)
    L = inductance_matrix(arrays)
    ref = mutual_coplanar_polygons([(x, y) for x, y, _ in p], [(x, y) for x, y, _ in q])
    c = loop_coupling(L, cur[0], cur[1])
    assert c.mutual == pytest.approx(ref, rel=2e-3)
    l1, l2 = cur[0] @ L @ cur[0], cur[1] @ L @ cur[1]
    assert c.k == pytest.approx(ref / math.sqrt(l1 * l2), rel=2e-3)
    # reversing one loop reverses M
    assert loop_coupling(L, cur[0], -cur[1]).mutual == pytest.approx(-c.mutual, rel=1e-12)


def test_shared_edge_is_the_edge_self_inductance() -> None:
    """Two 20 x 10 mm and 15 x 10 mm loops of 0.5 mm x 35 um trace sharing their
    10 mm common side, run in opposite senses there (both counter-clockwise): the
    shared-copper part is minus the partial self inductance of that side, within
    1% of the GMD formula (Grover 1946, ch. 5; Rosa 1908 GMD 0.2235 (w + t); the
    GMD method's error is well below 1% for l / GMD = 80); shared + flux = M."""
    w, t = 0.5e-3, 35e-6
    a = np.array([[0, 0, 0], [20e-3, 0, 0], [20e-3, 10e-3, 0], [0, 10e-3, 0]])
    # loop b: (20,0)-(35,0)-(35,10)-(20,10), shares the side x = 20 mm
    b_only = np.array([[20e-3, 0, 0], [35e-3, 0, 0], [35e-3, 10e-3, 0], [20e-3, 10e-3, 0]])
    arrays, cur = polygons([a, b_only[:3]], width=w, thickness=t)
    # polygons() closes b with (35,10)->(20,0); replace b by its own path using a's side
    start = np.vstack([arrays.start[:4], b_only[:3]])
    end = np.vstack([arrays.end[:4], b_only[1:4]])
    n = len(start)
    arrays = type(arrays)(start=start, end=end, width=np.full(n, w), thickness=np.full(n, t),
                          round=np.zeros(n, bool), radius=np.zeros(n), inner_radius=np.zeros(n),
                          net_index=np.zeros(n, int), node_from=np.arange(n), node_to=np.arange(n) + n,
                          mirror_z=np.full(n, np.nan))
    ia = np.array([1, 1, 1, 1, 0, 0, 0], float)
    ib = np.array([0, -1, 0, 0, 1, 1, 1], float)  # a's side 1 runs (20,0)->(20,10); b runs it down
    L = inductance_matrix(arrays)
    c = loop_coupling(L, ia, ib)
    ref = self_straight_gmd(10e-3, gmd_rectangle(w, t))
    assert c.shared == pytest.approx(-ref, rel=0.01)
    assert c.shared + c.flux == pytest.approx(c.mutual, rel=1e-12)
    assert abs(c.k) < 1


def test_matrix_properties_on_random_divisions() -> None:
    """Any current divisions (complex) on any positive definite L: the pair matrix
    is symmetric in its real part (Re(a^H L b) = Re(b^H L a)), its diagonal is the
    loops' own Re(i^H L i) and |k| <= 1 (Cauchy-Schwarz for the inner product
    defined by a positive definite matrix; common practice), and the split adds up."""
    rng = np.random.default_rng(7)
    arrays, _ = polygons([circle(10e-3, 12, 0.0), circle(12e-3, 10, 3e-3), circle(6e-3, 8, -2e-3)],
                         radius=0.2e-3)
    L = inductance_matrix(arrays)
    n = len(arrays)
    C = rng.normal(size=(4, n)) + 1j * rng.normal(size=(4, n))
    C[:, rng.random(n) < 0.5] = 0
    m = coupling_matrix(L, C)
    assert np.allclose(m.mutual, m.mutual.T, rtol=1e-12, atol=0)
    assert np.allclose(np.diag(m.mutual), [np.real(np.conj(c) @ L @ c) for c in C], rtol=1e-12)
    off = ~np.eye(4, dtype=bool)
    assert np.all(np.abs(m.k[off]) <= 1)
    assert np.allclose(np.diag(m.k), 1)
    assert np.allclose(m.shared + m.flux, m.mutual, rtol=1e-12, atol=1e-25)


def test_mutual_impedance_is_reciprocal_and_matches_real_divisions() -> None:
    """With real divisions Im(Z_ba) / omega = M_ab, and Z_ab = Z_ba (reciprocity of
    linear networks, common practice); Re(Z) is the common resistance
    i_b^T diag(R) i_a."""
    arrays, cur = polygons([rectangle(0, 0, 20e-3, 10e-3), rectangle(5e-3, 2e-3, 15e-3, 8e-3)],
                           radius=0.1e-3)
    L = inductance_matrix(arrays)
    R = np.linspace(1e-3, 2e-3, len(arrays))
    f = 1e6
    z = mutual_impedance(L, R, cur[1], cur[0], f)
    assert z == pytest.approx(mutual_impedance(L, R, cur[0], cur[1], f), rel=1e-12)
    assert z.imag / (2 * math.pi * f) == pytest.approx(loop_coupling(L, cur[0], cur[1]).mutual, rel=1e-12)
    assert z.real == pytest.approx(0.0, abs=1e-18)  # no common copper


def test_bad_shapes_are_errors() -> None:
    with pytest.raises(ParasiteError, match=r"loop currents have shape \(2, 3\), expected \(loops, 4\)"):
        coupling_matrix(np.eye(4), np.ones((2, 3)))
    with pytest.raises(ParasiteError, match="must be square"):
        coupling_matrix(np.ones((3, 4)), np.ones((1, 4)))


@pytest.mark.parametrize("share", [0.02, 0.5], ids=["few shared (gathered)", "many shared (product)"])
def test_shared_part_is_the_form_on_common_segments(share: float) -> None:
    """The shared part equals Re(sum over j, k both carried by the two loops of
    conj(i_a,j) L_jk i_b,k), written out directly here (the definition in the module
    docstring), whether the code gathers the few common segments or uses its
    masked product; to 1e-12."""
    from tests.extract.test_extract_matrix import random_board

    arrays = random_board(2, n_traces=150, planes="one")
    L = inductance_matrix(arrays)
    n = len(arrays)
    rng = np.random.default_rng(11)
    C = np.zeros((3, n), complex)
    base = rng.random(n) < share
    for a in range(3):
        own = (rng.random(n) < 0.3) | base
        C[a, own] = rng.normal(size=own.sum()) + 1j * rng.normal(size=own.sum())
    m = coupling_matrix(L, C)
    for a in range(3):
        for b in range(3):
            both = (C[a] != 0) & (C[b] != 0)
            ref = np.real(np.conj(C[a, both]) @ L[np.ix_(both, both)] @ C[b, both])
            assert m.shared[a, b] == pytest.approx(ref, rel=1e-12, abs=1e-24)
