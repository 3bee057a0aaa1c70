"""Loops of real routes files: netlist + routes -> graph -> extraction -> loops.

References:

* Parallel copper paths: two coupled branches in parallel,
  Z = (Z1 Z2 - Zm^2) / (Z1 + Z2 - 2 Zm), for identical ones L_eq = (L + M)/2
  (common circuit theory; e.g. Desoer & Kuh, *Basic Circuit Theory*, 1969).
  The path inductances L, M and resistances are sums of the extraction's
  partial elements along each path (their values are checked against
  published formulas by the extraction's own tests); what is checked here is
  the loop solver's current division on a real copper graph.
* ngspice 39's AC analysis of the augmented netlist (the same copper as series
  R-L branches with coupling statements) for a meshed net.
* Grover, *Inductance Calculations* (1946), ch. 16, rectangle formula, with
  the self-GMD of a rectangle 0.2235 (w + t) (Grover, ch. 3, Table 1; Rosa 1908).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from tests.boards import TWO_LAYERS, write

MU0 = 4e-7 * math.pi

HEADER = TWO_LAYERS


def grover_rectangle(a: float, b: float, gmd: float) -> float:
    """Grover (1946), ch. 16: L = mu0/pi [a ln(2a/g) + b ln(2b/g) + 2d
    - a asinh(a/b) - b asinh(b/a) - 2(a+b)], d = sqrt(a^2+b^2)."""
    d = math.hypot(a, b)
    return MU0 / math.pi * (
        a * math.log(2 * a / gmd) + b * math.log(2 * b / gmd) + 2 * d
        - a * math.asinh(a / b) - b * math.asinh(b / a) - 2 * (a + b)
    )


def run_loops(netlist: str, routes: str):
    from parasite.loops import loop_results
    from parasite.pipeline import extract, load_inputs

    inputs = load_inputs(netlist, routes)
    ex = extract(inputs)
    results = loop_results(inputs.graph, inputs.netlist, ex.L, ex.R)
    return inputs, ex, {r.name: r for r in results}


# ---------------------------------------------------------------------------
# Two mirror-image paths between the same two pins

PARALLEL_NET = """* two copper paths in parallel (test scenario)
R1 a 0 1
R2 a 0 1
.end
"""


def parallel_routes(half_width: float, both: bool, frequency: str = "") -> str:
    w = half_width
    text = HEADER + f"""
[[trace]]
net = "a"
layer = "top"
width = 1.0
points = [[0, 0], [{-w}, 0], [{-w}, 20], [0, 20]]
"""
    if both:
        text += f"""
[[trace]]
net = "a"
layer = "top"
width = 1.0
points = [[0, 0], [{w}, 0], [{w}, 20], [0, 20]]
"""
    text += """
[[pin]]
terminal = "R1:1"
at = [0, 0]
layer = "top"

[[pin]]
terminal = "R2:1"
at = [0, 20]
layer = "top"

[[loop]]
name = "port"
path = ["R1:1", "R2:1", "R2:2", "R1:2"]
"""
    if frequency:
        text += f"frequency = {frequency}\n"
    return text


def path_sums(graph, L, R, source: str):
    idx = np.array([s.index for s in graph.segments if s.source == source])
    return idx, float(L[np.ix_(idx, idx)].sum()), float(R[idx].sum())


@pytest.mark.parametrize("half_width", [8.0, 200.0])
def test_two_identical_paths_give_l_plus_m_over_two(tmp_path, half_width):
    """Mirror-image paths between the same two pins: L_loop = (Lp + M)/2 and
    R_loop = Rp/2 at the low-frequency limit (tolerance 1e-9 relative: a
    symmetric division computed two ways); far apart (200 mm), M is under 3% of
    Lp and the loop is within 2% of half of one path."""
    net = write(tmp_path, "par.cir", PARALLEL_NET)
    routes = write(tmp_path, "par.routes.toml", parallel_routes(half_width, both=True))
    inputs, ex, loops = run_loops(net, routes)
    g = inputs.graph
    i1, L1, R1 = path_sums(g, ex.L, ex.R, "trace[0]")
    i2, L2, R2 = path_sums(g, ex.L, ex.R, "trace[1]")
    assert len(i1) == len(i2) == 3
    assert L1 == pytest.approx(L2, rel=1e-9)  # mirror images
    M = float(ex.L[np.ix_(i1, i2)].sum())
    loop = loops["port"]
    assert loop.frequency == 0.0
    assert loop.inductance == pytest.approx((L1 + M) / 2, rel=1e-9)
    assert loop.resistance == pytest.approx(R1 / 2, rel=1e-9)
    if half_width > 100:
        assert abs(M) < 0.03 * L1
        assert loop.inductance == pytest.approx(L1 / 2, rel=0.02)
    # The same path alone (a tree) is the signed sum of its partial inductances.
    routes1 = write(tmp_path, "one.routes.toml", parallel_routes(half_width, both=False))
    inputs1, ex1, loops1 = run_loops(net, routes1)
    assert loops1["port"].inductance == pytest.approx(float(ex1.L.sum()), rel=1e-12)
    assert loops1["port"].inductance == pytest.approx(L1, rel=1e-9)


def test_unequal_paths_divide_as_the_coupled_pair_formula(tmp_path):
    """Paths of different widths at 10 MHz: the port impedance of the two
    coupled path impedances (pair formula), tolerance 1e-9 relative."""
    text = parallel_routes(8.0, both=True, frequency="1e7").replace(
        "width = 1.0\npoints = [[0, 0], [8.0", "width = 0.3\npoints = [[0, 0], [8.0")
    net = write(tmp_path, "par.cir", PARALLEL_NET)
    routes = write(tmp_path, "par.routes.toml", text)
    inputs, ex, loops = run_loops(net, routes)
    from parasite.extract import resistances

    R = resistances(inputs.graph.arrays, inputs.routes.copper, 1e7)
    i1, L1, R1 = path_sums(inputs.graph, ex.L, R, "trace[0]")
    i2, L2, R2 = path_sums(inputs.graph, ex.L, R, "trace[1]")
    assert R2 > 2 * R1  # the narrow path
    M = float(ex.L[np.ix_(i1, i2)].sum())
    w = 2 * math.pi * 1e7
    Z = ((R1 + 1j * w * L1) * (R2 + 1j * w * L2) - (1j * w * M) ** 2) / (
        R1 + R2 + 1j * w * (L1 + L2 - 2 * M))
    loop = loops["port"]
    assert loop.frequency == 1e7
    assert loop.inductance == pytest.approx(Z.imag / w, rel=1e-9)
    assert loop.resistance == pytest.approx(Z.real, rel=1e-9)
    assert sum(t for _, t in loop.contributors) == pytest.approx(loop.inductance, rel=1e-12)


# ---------------------------------------------------------------------------
# A rectangle loop against Grover, and the terms of the loop

RECT_NET = """* a rectangular current loop (test scenario)
V1 a 0 DC 0
R1 a b 1
C1 b 0 1u
.end
"""


def rect_routes(limit: str = "") -> str:
    """A 40 x 20 mm rectangle of 1 mm traces on one layer: V1 and C1 in a
    0.5 mm gap at one corner, R1 in a 0.5 mm gap of the top side."""
    text = HEADER + """
[[trace]]
net = "a"
layer = "top"
width = 1.0
points = [[0, 0.5], [0, 20], [19.75, 20]]

[[trace]]
net = "b"
layer = "top"
width = 1.0
points = [[20.25, 20], [40, 20], [40, 0], [0.5, 0]]

[[pin]]
terminal = "V1:p"
at = [0, 0.5]
layer = "top"

[[pin]]
terminal = "R1:1"
at = [19.75, 20]
layer = "top"

[[pin]]
terminal = "R1:2"
at = [20.25, 20]
layer = "top"

[[pin]]
terminal = "C1:1"
at = [0.5, 0]
layer = "top"

[[loop]]
name = "rect"
path = ["V1:p", "R1:1", "R1:2", "C1:1", "C1:2", "V1:n"]
"""
    if limit:
        text += f"limit = {limit}\n"
    return text


def test_rectangle_loop_near_grover_and_terms_add_up(tmp_path):
    """40 x 20 mm rectangle of 1 mm x 35 um traces: within 3% of Grover's
    rectangle formula (the copper has three 0.5 mm gaps, where the elements
    sit, that the formula closes: about 1.5% less inductance; the GMD form of
    the formula holds to well under 1% for sides >> GMD, Grover ch. 16).
    Segment terms add up to the loop (1e-12 relative)."""
    net = write(tmp_path, "rect.cir", RECT_NET)
    routes = write(tmp_path, "rect.routes.toml", rect_routes())
    inputs, ex, loops = run_loops(net, routes)
    loop = loops["rect"]
    ref = grover_rectangle(0.040, 0.020, 0.2235 * (1e-3 + 35e-6))
    assert loop.inductance == pytest.approx(ref, rel=0.03)
    assert sum(t for _, t in loop.contributors) == pytest.approx(loop.inductance, rel=1e-12)
    self_total = sum(t for _, t in loop.self_terms)
    # Tree: every segment carries 1 A, so the self terms are the partial selves.
    assert self_total == pytest.approx(float(np.trace(ex.L)), rel=1e-12)
    ids = [sid for sid, _ in loop.contributors]
    assert len(ids) == len(inputs.graph.segments)
    # The one uncut 40 mm side has the largest term (the other is cut in two by the port).
    longest = {s.id for s in inputs.graph.segments if s.length > 0.035}
    assert ids[0] in longest
    # Pair terms: 5 segments, 10 pairs, all kept. Perpendicular sides do not
    # couple (Neumann's formula: dl1 . dl2 = 0); opposite sides carry opposite
    # currents (negative terms); the two collinear pieces of the top side carry
    # the current the same way, the only positive term. Ranked by magnitude,
    # signs kept: a cancelling term is listed by its size.
    pairs = loop.pair_contributors
    assert len(pairs) == 10
    top_side = {s.id for s in inputs.graph.segments
                if abs(s.start[1] - 0.020) < 1e-9 and abs(s.end[1] - 0.020) < 1e-9}
    positive = [p for p in pairs if p[2] > 1e-3 * max(abs(t) for _, _, t in pairs)]
    assert len(positive) == 1 and {positive[0][0], positive[0][1]} == top_side
    sizes = [abs(t) for _, _, t in pairs]
    assert sizes == sorted(sizes, reverse=True)
    assert pairs[0][2] < 0  # the opposite sides' cancellation outranks the collinear pieces
    assert self_total + sum(t for _, _, t in pairs) == pytest.approx(loop.inductance, rel=1e-12)


# ---------------------------------------------------------------------------
# A meshed net against ngspice


MESH_NET = """* meshed copper driven by an AC current port (test scenario)
I1 0 a DC 0 AC 1
V2 a 0 DC 0
.ac lin 1 {f} {f}
.end
"""


def mesh_routes(frequency: str) -> str:
    """Net 'a': a ladder of three 10 x 10 mm cells on the top layer (1 mm traces),
    from I1 at one corner to V2 at the far corner; net '0' returns on the
    bottom layer under the ladder's edge."""
    return HEADER + f"""
[[trace]]
net = "a"
layer = "top"
width = 1.0
points = [[0, 0], [30, 0]]

[[trace]]
net = "a"
layer = "top"
width = 1.0
points = [[0, 10], [30, 10]]

[[trace]]
net = "a"
layer = "top"
width = 0.5
points = [[0, 0], [0, 10]]

[[trace]]
net = "a"
layer = "top"
width = 0.5
points = [[10, 0], [10, 10]]

[[trace]]
net = "a"
layer = "top"
width = 0.5
points = [[20, 0], [20, 10]]

[[trace]]
net = "a"
layer = "top"
width = 0.5
points = [[30, 0], [30, 10]]

[[trace]]
net = "0"
layer = "bottom"
width = 2.0
points = [[30, 10], [30, -2], [0, -2], [0, 0]]

[[pin]]
terminal = "I1:n"
at = [0, 0]
layer = "top"

[[pin]]
terminal = "V2:p"
at = [30, 10]
layer = "top"

[[pin]]
terminal = "I1:p"
at = [0, 0]
layer = "bottom"

[[pin]]
terminal = "V2:n"
at = [30, 10]
layer = "bottom"

[[loop]]
name = "mesh"
path = ["I1:n", "V2:p", "V2:n", "I1:p"]
frequency = {frequency}
"""


@pytest.mark.ngspice
@pytest.mark.parametrize("frequency", ["1e6", "1e8"])
def test_meshed_net_matches_ngspice_ac_of_the_augmented_netlist(tmp_path, frequency):
    """A ladder of three cells (four parallel rungs) plus a return trace: the
    loop value equals ngspice's Im(V/I)/omega and Re(V/I) of the augmented
    netlist at the loop's frequency. The issue asks for 0.5%; with every
    coupling written (|k| >= 1e-6) the two agree to about 1e-11, so the test
    holds them to 1e-6 (the netlist carries 10 significant digits, and the
    writer may adjust the written matrix slightly to keep it positive
    definite)."""
    from parasite.augment import augment_files
    from parasite.spice import run_ngspice

    f = float(frequency)
    net = write(tmp_path, "mesh.cir", MESH_NET.format(f=frequency))
    routes = write(tmp_path, "mesh.routes.toml", mesh_routes(frequency))
    inputs, ex, loops = run_loops(net, routes)
    loop = loops["mesh"]
    aug = augment_files(net, routes, min_coupling=1e-6, frequency=f)
    sim = run_ngspice(aug.netlist_bytes, base_dir=tmp_path)
    z = complex(np.asarray(sim.vector("v(a)"))[0])
    w = 2 * math.pi * f
    assert loop.inductance == pytest.approx(z.imag / w, rel=1e-6)
    assert loop.resistance == pytest.approx(z.real, rel=1e-6)
    # There is a mesh: the division is not the tree's single path. Four rungs
    # carry current.
    rungs = [s.id for s in inputs.graph.segments if s.source in
             ("trace[2]", "trace[3]", "trace[4]", "trace[5]")]
    carrying = {sid for sid, _ in loop.contributors}
    assert set(rungs) <= carrying


# ---------------------------------------------------------------------------
# Errors


def test_loop_errors_name_the_place(tmp_path):
    from geometry.errors import RoutesError

    net = write(tmp_path, "rect.cir", RECT_NET)
    bad_hop = rect_routes().replace('"R1:2", "C1:1"', '"R1:2", "V1:n"')
    routes = write(tmp_path, "bad.routes.toml", bad_hop)
    with pytest.raises(RoutesError, match=r"bad\.routes\.toml:\d+: error: loop\[0\]\.path\[3\]: "
                       r"loop 'rect' goes from 'R1:2' \(net 'b'\) to 'V1:n' \(net '0'\)"):
        run_loops(net, routes)
    unknown = rect_routes().replace('"C1:2", "V1:n"', '"C1:3", "V1:n"')
    routes = write(tmp_path, "unknown.routes.toml", unknown)
    with pytest.raises(RoutesError, match=r"loop\[0\]\.path\[4\]: terminal 'C1:3'"):
        run_loops(net, routes)
    no_element = rect_routes().replace(
        'path = ["V1:p", "R1:1", "R1:2", "C1:1", "C1:2", "V1:n"]', 'path = ["V1:p", "R1:1"]')
    routes = write(tmp_path, "noel.routes.toml", no_element)
    with pytest.raises(RoutesError, match=r"never passes through an element"):
        run_loops(net, routes)
