"""End-to-end checks of ``augment``: the augmented netlist simulated in ngspice
against published formulas and circuit theory (never against the code's own
numbers alone)."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from parasite.augment import augment_files
from parasite.spice import run_ngspice
from tests.boards import ONE_LAYER, pin, trace
from tests.reference import gmd_rectangle, mutual_parallel_filaments, rectangle_loop, self_straight_gmd

pytestmark = pytest.mark.ngspice

F_AC = 1e6  # Hz: low enough that skin effect plays no part in Im(Z)


def _write(tmp: Path, netlist: str, routes: str) -> tuple[str, str]:
    n, r = tmp / "c.cir", tmp / "c.routes.toml"
    n.write_text(netlist)
    r.write_text(routes)
    return str(n), str(r)


_trace, _pin, HEAD = trace, pin, ONE_LAYER

PORT_NETLIST = """port test (AC drive of a copper loop)
I1 p n AC 1
R0 p n {r0}
RLEAK n 0 1meg
.ac lin 1 {f} {f}
.end
"""


def _ac_inductance(netlist_bytes: bytes, base: Path) -> tuple[float, complex]:
    res = run_ngspice(netlist_bytes, base_dir=base)
    z = complex(np.asarray(res.vector("v(n)"))[0] - np.asarray(res.vector("v(p)"))[0])
    return z.imag / (2 * math.pi * F_AC), z


def _rectangle_routes(a: float, b: float, w: float, h: float, mirror: bool = False,
                      reverse: bool = False) -> str:
    """A rectangle a x b (mm) of trace width w, cut in the middle of the left
    side (source I1) and of the right side (R0), gaps h."""
    sx = -1.0 if mirror else 1.0

    def m(p: tuple[float, float]) -> tuple[float, float]:
        return (sx * p[0], p[1])

    lo, hi = b / 2 - h / 2, b / 2 + h / 2
    p_pts = [m(q) for q in [(0, lo), (0, 0), (a, 0), (a, lo)]]
    n_pts = [m(q) for q in [(a, hi), (a, b), (0, b), (0, hi)]]
    if reverse:
        n_pts = n_pts[::-1]
    return (HEAD + _trace("p", p_pts, w) + _trace("n", n_pts, w)
            + _pin("I1:p", m((0, lo))) + _pin("R0:1", m((a, lo)))
            + _pin("I1:n", m((0, hi))) + _pin("R0:2", m((a, hi)))
            + f'[[loop]]\nname = "rect"\npath = ["I1:p", "R0:1", "R0:2", "I1:n"]\nfrequency = {F_AC}\n')


def test_rectangle_loop_against_grover(tmp_path: Path) -> None:
    """A 40 mm x 30 mm rectangle of 0.5 mm x 35 um trace: Im(V/I)/omega from
    ngspice's AC analysis of the augmented netlist is within 1% of Grover's
    rectangle formula (Grover, *Inductance Calculations*, 1946, ch. 16, with the
    rectangle's GMD 0.2235 (w + t), Rosa 1908), and within 0.1% of the loop
    value in the report. The 0.3 mm cuts for the port and the resistor leave
    out 0.6 mm of 140 mm of perimeter (about 0.3% of L), inside the 1%."""
    a, b, w, h = 40.0, 30.0, 0.5, 0.3
    n, r = _write(tmp_path, PORT_NETLIST.format(r0="1e-6", f=F_AC), _rectangle_routes(a, b, w, h))
    result = augment_files(n, r)
    L_spice, _ = _ac_inductance(result.netlist_bytes, tmp_path)
    L_grover = rectangle_loop(a * 1e-3, b * 1e-3, gmd_rectangle(w * 1e-3, 35e-6))
    assert L_spice == pytest.approx(L_grover, rel=0.01)
    (loop,) = result.report["loops"]
    assert loop["inductance"] == pytest.approx(L_spice, rel=1e-3)


def _pair_routes(length: float, width: float, gap: float, reverse_return: bool = False,
                 mirror: bool = False) -> str:
    """Two parallel traces (go on net p at y=0, return on net n at y=gap),
    driven at x=0 by I1 and joined at x=length by R0."""
    sx = -1.0 if mirror else 1.0
    go = [(0.0, 0.0), (sx * length, 0.0)]
    ret = [(sx * length, gap), (0.0, gap)]
    if reverse_return:
        ret = ret[::-1]
    return (HEAD + _trace("p", go, width) + _trace("n", ret, width)
            + _pin("I1:p", (0.0, 0.0)) + _pin("R0:1", (sx * length, 0.0))
            + _pin("I1:n", (0.0, gap)) + _pin("R0:2", (sx * length, gap)))


def test_go_and_return_pair_is_L1_plus_L2_minus_2M(tmp_path: Path) -> None:
    """Two parallel 50 mm x 1 mm traces 3 mm apart carrying go and return
    current: ngspice sees L1 + L2 - 2M (standard circuit theory for coupled
    inductors in series opposition). L from the GMD method (Grover 1946,
    ch. 5; Rosa 1908) and M from Grover's parallel-filament formula at the
    centre distance; both approximations are within about 0.5% here, so
    the tolerance is 1%."""
    length, width, gap = 50.0, 1.0, 3.0
    n, r = _write(tmp_path, PORT_NETLIST.format(r0="1e-6", f=F_AC), _pair_routes(length, width, gap))
    L_spice, _ = _ac_inductance(augment_files(n, r).netlist_bytes, tmp_path)
    Ls = self_straight_gmd(length * 1e-3, gmd_rectangle(width * 1e-3, 35e-6))
    M = mutual_parallel_filaments(length * 1e-3, gap * 1e-3)
    assert L_spice == pytest.approx(2 * Ls - 2 * M, rel=0.01)


@pytest.mark.parametrize("variant", [{"reverse_return": True}, {"mirror": True},
                                     {"reverse_return": True, "mirror": True}])
def test_orientation_and_mirror_do_not_change_the_loop(tmp_path: Path, variant: dict[str, bool]) -> None:
    """Reversing the point order of one trace flips the sign of its mutual
    terms and the direction of its inductor together, and mirroring the board
    changes nothing physical: ngspice must give the same impedance (to 1e-6,
    the digits the netlist carries)."""
    length, width, gap = 50.0, 1.0, 3.0
    base = tmp_path / "base"
    var = tmp_path / "var"
    base.mkdir()
    var.mkdir()
    n0, r0 = _write(base, PORT_NETLIST.format(r0="1e-6", f=F_AC), _pair_routes(length, width, gap))
    n1, r1 = _write(var, PORT_NETLIST.format(r0="1e-6", f=F_AC), _pair_routes(length, width, gap, **variant))
    _, z0 = _ac_inductance(augment_files(n0, r0).netlist_bytes, base)
    _, z1 = _ac_inductance(augment_files(n1, r1).netlist_bytes, var)
    assert z1.real == pytest.approx(z0.real, rel=1e-6)
    assert z1.imag == pytest.approx(z0.imag, rel=1e-6)
