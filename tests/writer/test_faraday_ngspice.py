"""Faraday's law in the augmented netlist: two measurement paths between the
same two nodes, on opposite sides of a loop that encloses changing flux, read
different voltages (Griffiths, *Introduction to Electrodynamics*, 4th ed.,
2013, ch. 7.1-7.2: the EMF around a closed path is -dPhi/dt, so the voltage
between two points depends on the path when the enclosed flux changes)."""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import pytest

from parasite.augment import augment_files
from parasite.spice import run_ngspice
from tests.boards import ONE_LAYER as HEAD
from tests.boards import pin as _pin
from tests.boards import trace as _trace
from tests.reference import mutual_coplanar_paths, mutual_coplanar_polygons

pytestmark = pytest.mark.ngspice

F = 1e6  # Hz
NETLIST = """measurement paths around a loop with changing flux (AC)
* driven loop: 1 A at {f} Hz
I1 dp dn AC 1
R0 dp dn 1e-6
RDL dn 0 1meg
* the ring: R1 on its left side, R2 on its right side, junctions t (top) and b (bottom)
R1 t b 100
R2 t b 200
RBL b 0 1meg
* two high-impedance meters, at the ends of leads on the left and on the right
RML t b 1e9
RMR t b 1e9
.ac lin 1 {f} {f}
.end
"""


def _routes() -> str:
    w = 0.5
    s = HEAD
    # driven loop, a 10 x 10 mm square centred on the origin, cut at the middle of its left and right sides
    s += _trace("dp", [(-5, -0.3), (-5, -5), (5, -5), (5, -0.3)], w)
    s += _trace("dn", [(5, 0.3), (5, 5), (-5, 5), (-5, 0.3)], w)
    s += _pin("I1:1", (-5, -0.3)) + _pin("R0:1", (5, -0.3))
    s += _pin("I1:2", (-5, 0.3)) + _pin("R0:2", (5, 0.3))
    # the ring, 40 x 40 mm: net t is its top half, net b its bottom half; R1, R2 cut its sides at y=0
    s += _trace("t", [(-20, 0.5), (-20, 20), (20, 20), (20, 0.5)], w)
    s += _trace("b", [(-20, -0.5), (-20, -20), (20, -20), (20, -0.5)], w)
    s += _pin("R1:1", (-20, 0.5)) + _pin("R1:2", (-20, -0.5))
    s += _pin("R2:1", (20, 0.5)) + _pin("R2:2", (20, -0.5))
    # meter leads: from the ring's corners, 1 mm outside its sides, to a meter at x = -21 and x = +21
    s += _trace("t", [(-20, 20), (-21, 20), (-21, 0.5)], w)
    s += _trace("b", [(-20, -20), (-21, -20), (-21, -0.5)], w)
    s += _trace("t", [(20, 20), (21, 20), (21, 0.5)], w)
    s += _trace("b", [(20, -20), (21, -20), (21, -0.5)], w)
    s += _pin("RML:1", (-21, 0.5)) + _pin("RML:2", (-21, -0.5))
    s += _pin("RMR:1", (21, 0.5)) + _pin("RMR:2", (21, -0.5))
    return s


def _nodes(netlist: str, element: str) -> tuple[str, str]:
    m = re.search(rf"^{element}\s+(\S+)\s+(\S+)", netlist, re.MULTILINE | re.IGNORECASE)
    assert m, element
    return m.group(1), m.group(2)


def test_two_meters_read_the_resistor_on_their_own_side(tmp_path: Path) -> None:
    """Each meter reads the drop across the resistor on its own side, plus the
    small EMF through the thin loop its leads form with that side (within 25%
    of that EMF from Neumann's formula; the thin loop's filament model is
    crude at 1 mm spacing of 0.5 mm traces); the two readings differ,
    and their difference equals the EMF around the loop that the two
    measurement paths form, jw M I (Faraday's law, Griffiths ch. 7), with M
    between the driven square and that 42 x 40 mm rectangle from Neumann's
    formula for coplanar filament paths (Grover 1946, ch. 5; filaments at
    the centre lines, the cuts for the meters and the driven loop's port
    left open as in the copper; filaments for 0.5 mm traces: 2%)."""
    n, r = tmp_path / "f.cir", tmp_path / "f.routes.toml"
    n.write_text(NETLIST.format(f=F))
    r.write_text(_routes())
    # every non-zero coupling is written: the EMF in a high-impedance measurement loop is the
    # sum of many weak couplings, each below the default threshold
    text = augment_files(str(n), str(r), min_coupling=1e-9).netlist_bytes.decode()
    res = run_ngspice(text, base_dir=tmp_path)

    def v(a: str, b: str) -> complex:
        return complex(np.asarray(res.vector(f"v({a})"))[0] - np.asarray(res.vector(f"v({b})"))[0])

    left, right = v(*_nodes(text, "RML")), v(*_nodes(text, "RMR"))
    vr1, vr2 = v(*_nodes(text, "R1")), v(*_nodes(text, "R2"))
    assert abs(left - right) > 0.5 * abs(left)  # the two paths disagree

    def mm(poly: list[tuple[float, float]]) -> list[tuple[float, float]]:
        return [(x * 1e-3, y * 1e-3) for x, y in poly]

    w = 2 * math.pi * F
    square = mm([(-5, -5), (5, -5), (5, 5), (-5, 5)])
    # each meter reads its own side's resistor drop plus the EMF through the thin loop that
    # its leads form with that side of the ring (1 mm x 40 mm): a few percent here
    for reading, v_r, x_lead, x_side in ((left, vr1, -21, -20), (right, vr2, 21, 20)):
        thin = mm([(x_lead, -20), (x_side, -20), (x_side, 20), (x_lead, 20)])
        emf_thin = w * abs(mutual_coplanar_polygons(square, thin))
        assert abs(reading - v_r) == pytest.approx(emf_thin, rel=0.25)
        assert abs(reading - v_r) < 0.05 * abs(v_r)

    driven = [mm([(-5, -0.3), (-5, -5), (5, -5), (5, -0.3)]), mm([(5, 0.3), (5, 5), (-5, 5), (-5, 0.3)])]
    outer = [mm([(-21, 0.5), (-21, 20), (20, 20), (21, 20), (21, 0.5)]),
             mm([(21, -0.5), (21, -20), (-21, -20), (-21, -0.5)])]
    M = mutual_coplanar_paths(driven, outer)
    emf = w * abs(M) * 1.0
    assert abs(left - right) == pytest.approx(emf, rel=0.02)
    # the EMF of a sinusoidal current is in quadrature with it
    assert abs((left - right).real) < 0.05 * abs(left - right)
