"""The loop solver on networks given directly (nodes, branches, L and R).

References used here, each computed in the test, never taken from the code:

* Grover, *Inductance Calculations* (1946), ch. 5 eq. (1): mutual inductance
  of two equal parallel aligned filaments; the GMD method (ch. 5) for the self
  term, with Rosa's thin-conductor form (Rosa, "The self and mutual
  inductances of linear conductors", Bull. Bureau of Standards 4, 1908);
  ch. 16, the rectangle formula for a whole rectangular loop.
* Two coupled branches in parallel (common circuit theory, e.g. Desoer & Kuh,
  *Basic Circuit Theory*, 1969, coupled inductors; the T-equivalent):
  Z = (Z1 Z2 - Zm^2) / (Z1 + Z2 - 2 Zm), Zm = j omega M; for identical
  branches L_eq = (L + M) / 2.
* ngspice 39 itself: AC analysis of the same R-L-K network.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from parasite.network.solve import branch_currents, solve_port, top_pair_terms

MU0 = 4e-7 * math.pi  # H/m


def grover_parallel(length: float, distance: float) -> float:
    """Grover (1946), ch. 5, eq. (1): M = mu0/(2 pi) [l asinh(l/d) - sqrt(l^2+d^2) + d]."""
    l, d = length, distance
    return MU0 / (2 * math.pi) * (l * math.asinh(l / d) - math.hypot(l, d) + d)


def rosa_self(length: float, gmd: float) -> float:
    """Straight conductor of self-GMD g, l >> g: L = mu0 l/(2 pi) [ln(2l/g) - 1]
    (Rosa, Bull. Bureau of Standards 4, 1908; Grover 1946, ch. 5)."""
    return MU0 * length / (2 * math.pi) * (math.log(2 * length / gmd) - 1)


def grover_rectangle(a: float, b: float, gmd: float) -> float:
    """Grover (1946), ch. 16, rectangle of sides a, b, conductor self-GMD g:
    L = mu0/pi [a ln(2a/g) + b ln(2b/g) + 2d - a asinh(a/b) - b asinh(b/a) - 2(a+b)]."""
    d = math.hypot(a, b)
    return MU0 / math.pi * (
        a * math.log(2 * a / gmd) + b * math.log(2 * b / gmd) + 2 * d
        - a * math.asinh(a / b) - b * math.asinh(b / a) - 2 * (a + b)
    )


def parallel_pair(Z1: complex, Z2: complex, Zm: complex) -> complex:
    """Two coupled branches in parallel (T-equivalent of coupled inductors)."""
    return (Z1 * Z2 - Zm * Zm) / (Z1 + Z2 - 2 * Zm)


def rectangle_network(a: float, b: float, gmd: float, flip: tuple[int, ...] = ()):
    """A rectangle of four segments, corner nodes 0..3 and node 4 back at the
    origin (the gap where an element sits). Segments listed in ``flip`` are
    oriented against the loop (their rows and columns of L change sign)."""
    nf = np.array([0, 1, 2, 3])
    nt = np.array([1, 2, 3, 4])
    s_a, s_b = rosa_self(a, gmd), rosa_self(b, gmd)
    L = np.diag([s_a, s_b, s_a, s_b])
    # Opposite sides carry opposite currents: the partial mutual of the
    # segments in their own directions is -M.
    L[0, 2] = L[2, 0] = -grover_parallel(a, b)
    L[1, 3] = L[3, 1] = -grover_parallel(b, a)
    sign = np.ones(4)
    for k in flip:
        nf[k], nt[k] = nt[k], nf[k]
        sign[k] = -1
    L = L * np.outer(sign, sign)
    injection = np.zeros(5)
    injection[4] -= 1.0  # the element takes the current at node 4 ...
    injection[0] += 1.0  # ... and gives it back at node 0
    return nf, nt, injection, L


@pytest.mark.parametrize("flip", [(), (1,), (0, 3), (0, 1, 2, 3)])
@pytest.mark.parametrize("frequency", [0.0, 1e6, 1e8])
def test_tree_loop_is_the_signed_sum_matching_grover_rectangle(flip, frequency):
    """A rectangle of copper (a tree: no parallel path) gives the signed sum of
    partial inductances at every frequency, which is Grover's rectangle formula
    (tolerance 1e-12 relative: the same algebra, only rounding differs)."""
    a, b, g = 0.030, 0.010, 0.5e-3
    nf, nt, inj, L = rectangle_network(a, b, g, flip)
    R = np.array([1e-3, 2e-3, 1e-3, 2e-3])
    sol = solve_port(nf, nt, 5, inj, L, R, frequency)
    assert sol.inductance == pytest.approx(grover_rectangle(a, b, g), rel=1e-12)
    assert sol.resistance == pytest.approx(R.sum(), rel=1e-12)
    # Each flipped segment carries -1 A in its own direction.
    expected = np.where(np.isin(np.arange(4), flip), -1.0, 1.0)
    np.testing.assert_allclose(np.real(sol.currents), expected, atol=1e-12)


@pytest.mark.parametrize("frequency", [0.0, 1e3, 1e8])
def test_two_identical_parallel_branches_give_l_plus_m_over_two(frequency):
    """Two identical traces between the same two nodes: L_eq = (L + M)/2 and
    R_eq = R/2 at every frequency (the current splits evenly by symmetry).
    L and M from Grover's formulas for 20 mm filaments 5 mm apart, GMD 0.3 mm."""
    length, gap, g = 0.020, 0.005, 0.3e-3
    Ls, M = grover_parallel(length, g), grover_parallel(length, gap)
    # Branches 0 and 1 in parallel from node 0 to node 1; the element closes 1 -> 0.
    nf, nt = np.array([0, 0]), np.array([1, 1])
    inj = np.array([1.0, -1.0])
    L = np.array([[Ls, M], [M, Ls]])
    R = np.array([4e-3, 4e-3])
    sol = solve_port(nf, nt, 2, inj, L, R, frequency)
    assert sol.inductance == pytest.approx((Ls + M) / 2, rel=1e-12)
    assert sol.resistance == pytest.approx(2e-3, rel=1e-12)
    # Far apart (M -> 0) it is half the inductance of one.
    far = solve_port(nf, nt, 2, inj, np.diag([Ls, Ls]), R, frequency)
    assert far.inductance == pytest.approx(Ls / 2, rel=1e-12)


@pytest.mark.parametrize("frequency", [1e4, 1e6, 1e8])
def test_unequal_parallel_branches_match_the_coupled_pair_formula(frequency):
    """Unequal coupled branches: port impedance from the T-equivalent formula,
    L = Im Z / omega and R = Re Z (tolerance 1e-10 relative: a 2x2 solve)."""
    L1, L2, M = 12e-9, 7e-9, 3e-9
    R1, R2 = 5e-3, 20e-3
    w = 2 * math.pi * frequency
    Z = parallel_pair(R1 + 1j * w * L1, R2 + 1j * w * L2, 1j * w * M)
    sol = solve_port(np.array([0, 0]), np.array([1, 1]), 2, np.array([1.0, -1.0]),
                     np.array([[L1, M], [M, L2]]), np.array([R1, R2]), frequency)
    assert sol.inductance == pytest.approx(Z.imag / w, rel=1e-10)
    assert sol.resistance == pytest.approx(Z.real, rel=1e-10)


def test_low_frequency_limit_is_the_limit_of_the_formula():
    """Frequency 0 means the limit omega -> 0 of Im Z / omega and Re Z of the
    coupled-pair formula (evaluated at 1e-3 Hz; tolerance 1e-9 relative)."""
    L1, L2, M = 12e-9, 7e-9, 3e-9
    R1, R2 = 5e-3, 20e-3
    w = 2 * math.pi * 1e-3
    Z = parallel_pair(R1 + 1j * w * L1, R2 + 1j * w * L2, 1j * w * M)
    sol = solve_port(np.array([0, 0]), np.array([1, 1]), 2, np.array([1.0, -1.0]),
                     np.array([[L1, M], [M, L2]]), np.array([R1, R2]), 0.0)
    assert sol.inductance == pytest.approx(Z.imag / w, rel=1e-9)
    assert sol.resistance == pytest.approx(Z.real, rel=1e-9)
    # Resistive division: i1 = R2 / (R1 + R2) (current divider, common practice).
    i1 = R2 / (R1 + R2)
    np.testing.assert_allclose(sol.currents, [i1, 1 - i1], rtol=1e-12)


def test_low_frequency_limit_never_below_the_high_frequency_division():
    """The resistive division cannot store less magnetic energy than the
    inductive one (which minimises i^T L i under the same Kirchhoff constraint)."""
    L1, L2, M = 12e-9, 7e-9, 3e-9
    args = (np.array([0, 0]), np.array([1, 1]), 2, np.array([1.0, -1.0]),
            np.array([[L1, M], [M, L2]]), np.array([5e-3, 20e-3]))
    lf = solve_port(*args, 0.0).inductance
    hf = solve_port(*args, 1e9).inductance
    inductive = (L1 * L2 - M * M) / (L1 + L2 - 2 * M)  # omega -> infinity of the pair formula
    assert hf == pytest.approx(inductive, rel=1e-6)
    assert lf > hf


def random_mesh(seed: int, n_nodes: int = 7, n_extra: int = 8):
    """A connected random graph (a path through all nodes plus extra branches,
    some of them parallel) with a random symmetric positive-definite L (k up to
    about 0.5) and positive R. Not physical copper: a test of the network."""
    rng = np.random.default_rng(seed)
    nf = list(range(n_nodes - 1))
    nt = list(range(1, n_nodes))
    for _ in range(n_extra):
        a, b = rng.choice(n_nodes, size=2, replace=False)
        nf.append(int(a))
        nt.append(int(b))
    n = len(nf)
    G = rng.normal(size=(n, n))
    C = G @ G.T / n + np.eye(n)
    d = np.sqrt(np.diag(C))
    C = C / np.outer(d, d)
    Ls = rng.uniform(2e-9, 10e-9, size=n)
    L = C * np.sqrt(np.outer(Ls, Ls))
    R = rng.uniform(1e-3, 10e-3, size=n)
    return np.array(nf), np.array(nt), L, R


@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("frequency", [0.0, 3e5, 5e7])
def test_terms_add_up_to_the_loop_inductance(seed, frequency):
    """Segment terms add up to L_loop; so do self terms plus every pair term
    (tolerance 1e-12 relative: sums of the same numbers in another order)."""
    nf, nt, L, R = random_mesh(seed)
    inj = np.zeros(7)
    inj[0], inj[6] = 1.0, -1.0
    sol = solve_port(nf, nt, 7, inj, L, R, frequency)
    assert sol.inductance > 0
    assert sol.segment_terms.sum() == pytest.approx(sol.inductance, rel=1e-12)
    pairs = top_pair_terms(sol.currents, L, count=10**6)
    assert len(pairs) == len(nf) * (len(nf) - 1) // 2
    total = sol.self_terms.sum() + sum(t for _, _, t in pairs)
    assert total == pytest.approx(sol.inductance, rel=1e-12)
    values = [t for _, _, t in pairs]
    assert [abs(v) for v in values] == sorted((abs(v) for v in values), reverse=True)  # by size


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_kirchhoff_laws_hold(seed):
    """Currents satisfy the injections at every node and sum to zero voltage
    around every mesh: Zb i = A^T V has a solution V (least squares residual
    at rounding level)."""
    nf, nt, L, R = random_mesh(seed)
    inj = np.zeros(7)
    inj[2], inj[5] = 1.0, -1.0
    w = 2 * math.pi * 2e6
    i = branch_currents(nf, nt, 7, inj, L, R, w)
    A = np.zeros((7, len(nf)))
    A[nf, np.arange(len(nf))] += 1
    A[nt, np.arange(len(nf))] -= 1
    np.testing.assert_allclose(A @ i, inj, atol=1e-12)
    v_branch = (np.diag(R) + 1j * w * L) @ i
    V, *_ = np.linalg.lstsq(A.T.astype(complex), v_branch, rcond=None)
    np.testing.assert_allclose(A.T @ V, v_branch, atol=1e-12 * np.abs(v_branch).max())


def test_disconnected_pieces_and_a_ring_branch():
    """A branch from a node to itself (a closed ring) and an unconnected piece
    carry no conduction current at DC; the loop is the series path alone."""
    nf = np.array([0, 1, 1, 3])
    nt = np.array([1, 2, 1, 4])
    L = np.diag([3e-9, 4e-9, 5e-9, 6e-9])
    R = np.full(4, 1e-3)
    inj = np.zeros(5)
    inj[0], inj[2] = 1.0, -1.0
    sol = solve_port(nf, nt, 5, inj, L, R, 0.0)
    assert sol.inductance == pytest.approx(7e-9, rel=1e-12)
    np.testing.assert_allclose(sol.currents, [1, 1, 0, 0], atol=1e-12)


def _network_deck(nf, nt, L, R, port_node: int, ground_node: int, frequency: float) -> str:
    """An ngspice deck of the R-L-K network with a 1 A AC current source that
    drives current into ``port_node`` and takes it from ``ground_node``."""

    def node(k: int) -> str:
        return "0" if k == ground_node else f"n{k}"

    lines = ["* loop solver check: R-L network with every coupling"]
    lines.append(f"Iport 0 {node(port_node)} DC 0 AC 1")
    for k, (a, b) in enumerate(zip(nf, nt, strict=True)):
        lines.append(f"L{k} {node(a)} m{k} {L[k, k]:.12e}")
        lines.append(f"R{k} m{k} {node(b)} {R[k]:.12e}")
    n = len(nf)
    for i in range(n):
        for j in range(i + 1, n):
            lines.append(f"K{i}_{j} L{i} L{j} {L[i, j] / math.sqrt(L[i, i] * L[j, j]):.12e}")
    lines += [".options indverbosity=1", f".ac lin 1 {frequency:g} {frequency:g}", ".end", ""]
    return "\n".join(lines)


@pytest.mark.ngspice
@pytest.mark.parametrize("seed", [1, 4])
@pytest.mark.parametrize("frequency", [1e5, 2e7])
def test_meshed_network_matches_ngspice_ac(seed, frequency):
    """Port impedance of a meshed, fully coupled network against ngspice 39's AC
    analysis of the same network: L = Im Z / omega and R = Re Z within 1e-6
    relative (the deck carries 13 significant digits; ngspice solves the same
    linear equations in double precision)."""
    from parasite.spice import run_ngspice

    nf, nt, L, R = random_mesh(seed)
    inj = np.zeros(7)
    inj[0], inj[6] = 1.0, -1.0
    sol = solve_port(nf, nt, 7, inj, L, R, frequency)
    result = run_ngspice(_network_deck(nf, nt, L, R, 0, 6, frequency))
    z = complex(np.asarray(result.vector("v(n0)"))[0])
    w = 2 * math.pi * frequency
    assert sol.inductance == pytest.approx(z.imag / w, rel=1e-6)
    assert sol.resistance == pytest.approx(z.real, rel=1e-6)


def test_loop_table_is_aligned_and_reads_results_or_their_dicts():
    from parasite.loops import LoopResult, format_loop_table, loop_result_dict
    from parasite.units import engineering

    results = [
        LoopResult("hot loop", 2.4133e-9, 4.1e-3, 1e8, 2e-9, False,
                   (("sw.1", 1.2e-9), ("vin.2", 1.2133e-9)), (), netlist_resistance=3.2e-3),
        LoopResult("gate", 7e-9, 0.0112, 0.0, None, None, (("g.1", 7e-9),), ()),
    ]
    text = format_loop_table(results)
    assert text == format_loop_table([loop_result_dict(r) for r in results])
    lines = text.splitlines()
    assert lines[0].split()[:2] == ["loop", "inductance"]
    assert lines[1].split() == ["hot", "loop", "2.41", "nH", "4.1", "mohm", "3.2", "mohm", "100",
                                "MHz", "2", "nH", "OVER", "sw.1", "(50%)"]
    assert "DC limit" in lines[2] and "no limit" in lines[2] and "g.1 (100%)" in lines[2]
    assert lines[3].startswith("(resistance at f: skin-effect estimate")  # which R is which
    # Right-aligned numbers: the unit of every inductance ends in the same column.
    ends = {line.index("H ") for line in lines[1:3]}
    assert len(ends) == 1
    assert format_loop_table([]) == ""
    assert engineering(4.7e-12, "F") == "4.7 pF"
    assert engineering(0.0, "H") == "0 H"
