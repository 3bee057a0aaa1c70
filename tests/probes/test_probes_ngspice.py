"""Probes in ngspice: what the augmented netlist's probe reads, against Faraday's
law with mutual inductances from an independent Neumann integration.

Reference: the reading of a probe whose leads carry no current is the voltage
between its contacts minus the EMF of the changing flux through the loop that
its leads close with the circuit, ``-j omega M I`` (Faraday's law: Griffiths,
*Introduction to Electrodynamics*, 4th ed., 2013, ch. 7.1-7.2). ``M`` is the
mutual inductance of that closed loop with the driven loop, from Neumann's
formula (Grover, *Inductance Calculations*, 1946, ch. 1-2) evaluated for
filament polygons with scipy's ``dblquad`` (a general-purpose integrator, not
the project's closed forms). Filaments at the conductors' centre lines: the
leads are round wires, whose outside field is their axis filament's, and the
0.5 mm traces sit at least 3 mm from every lead.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from scipy.integrate import dblquad

from parasite.augment import augment_files
from parasite.spice import run_ngspice
from tests.boards import ONE_LAYER as HEAD
from tests.boards import ROUTES as ROUTES_DIR
from tests.boards import pin as _pin
from tests.boards import trace as _trace

pytestmark = pytest.mark.ngspice

F = 1e6  # Hz
MU0_4PI = 1e-7  # H/m
MM = 1e-3
Z_TRACE = 1.5825  # mm, mid-plane of the top layer (HEAD: z = 1.565, thickness 0.035)
Z_TOP = 1.6  # mm, its top face, where leads start
Point3 = tuple[float, float, float]


# ---------------------------------------------------------------------------
# Independent reference: Neumann's formula for closed filament polygons


def neumann_polygons(p: Sequence[Point3], q: Sequence[Point3], *, open_p: bool = False) -> float:
    """Mutual inductance (H) of two closed filament polygons (points in mm, the
    last side closes back to the first point), by Neumann's formula
    M = mu0/(4 pi) sum_sides (u_a . u_b) Int Int ds dt / |r_a - r_b|, each
    double integral by scipy's dblquad. The polygons must not touch.

    With ``open_p`` the path ``p`` is not closed: the result is the line
    integral of the vector potential of a unit current in ``q`` along ``p``
    (the partial mutual inductance of the path with the closed loop ``q``)."""
    pa = np.asarray(p, dtype=float) * MM
    pb = np.asarray(q, dtype=float) * MM
    total = 0.0
    for i in range(len(pa) - 1 if open_p else len(pa)):
        a0, a1 = pa[i], pa[(i + 1) % len(pa)]
        da = a1 - a0
        for j in range(len(pb)):
            b0, b1 = pb[j], pb[(j + 1) % len(pb)]
            db = b1 - b0
            dot = float(da @ db)
            if abs(dot) < 1e-30:
                continue

            def f(t: float, s: float, a0: Any = a0, da: Any = da, b0: Any = b0,
                  db: Any = db) -> float:
                return 1.0 / float(np.linalg.norm(a0 + s * da - b0 - t * db))

            val, _ = dblquad(f, 0.0, 1.0, 0.0, 1.0, epsabs=0.0, epsrel=1e-9)
            total += dot * val  # ds dt = |da| |db| d(s) d(t); (u_a.u_b)|da||db| = da.db
    return MU0_4PI * total


def _lead(points: Sequence[Point3], radius: float = 0.2) -> str:
    pts = ", ".join(f"[{x:g}, {y:g}, {z:g}]" for x, y, z in points)
    return f"{{ points = [{pts}], radius = {radius:g} }}"


def _probe(name: str, tip: tuple[float, float], ground: tuple[float, float],
           tip_lead: Sequence[Point3], ground_lead: Sequence[Point3],
           instrument: str = '"10x"') -> str:
    return (f'[[probe]]\nname = "{name}"\n'
            f'tip = {{ layer = "top", at = [{tip[0]:g}, {tip[1]:g}] }}\n'
            f'ground = {{ layer = "top", at = [{ground[0]:g}, {ground[1]:g}] }}\n'
            f"tip_lead = {_lead(tip_lead)}\nground_lead = {_lead(ground_lead)}\n"
            f"instrument = {instrument}\n\n")


def _square() -> str:
    """The driven loop: a 20 x 20 mm square centred on the origin, 0.5 mm trace,
    cut at the middle of its left side (I1) and right side (R0), gaps 0.6 mm
    (as in tests/writer/test_faraday_ngspice.py)."""
    s = _trace("dp", [(-10, -0.3), (-10, -10), (10, -10), (10, -0.3)], 0.5)
    s += _trace("dn", [(10, 0.3), (10, 10), (-10, 10), (-10, 0.3)], 0.5)
    s += _pin("I1:1", (-10, -0.3)) + _pin("R0:1", (10, -0.3))
    s += _pin("I1:2", (-10, 0.3)) + _pin("R0:2", (10, 0.3))
    return s


# The square's current as a filament polygon, in the direction the current
# flows: I1 drives its 1 A from dp through itself to dn (SPICE: a current
# source's current flows from n+ through it to n-), so the copper carries it
# from dn at (-10, 0.3) up the left side, right along the top, down the right
# side, through R0 and back along the bottom: clockwise seen from above.
SQUARE_CURRENT = [(-10.0, 0.0, Z_TRACE), (-10.0, 10.0, Z_TRACE), (10.0, 10.0, Z_TRACE),
                  (10.0, -10.0, Z_TRACE), (-10.0, -10.0, Z_TRACE)]

SQUARE_NETLIST = """probe on a resistor beside a loop with changing flux (AC)
I1 dp dn AC 1
R0 dp dn 1e-6
RDL dn 0 1meg
{extra}
.ac lin 1 {f} {f}
.end
"""


def _run(tmp: Path, netlist: str, routes: str) -> tuple[str, Any, dict[str, Any]]:
    n, r = tmp / "p.cir", tmp / "p.routes.toml"
    n.write_text(netlist)
    r.write_text(routes)
    aug = augment_files(str(n), str(r))
    text = aug.netlist_bytes.decode()
    return text, run_ngspice(text, base_dir=tmp), aug.report


def _v(res: Any, a: str, b: str) -> complex:
    return complex(np.asarray(res.vector(f"v({a})"))[0] - np.asarray(res.vector(f"v({b})"))[0])


def _nodes(netlist: str, element: str) -> tuple[str, str]:
    m = re.search(rf"^{element}\s+(\S+)\s+(\S+)", netlist, re.MULTILINE | re.IGNORECASE)
    assert m, element
    return m.group(1), m.group(2)


def _reading(res: Any, report: dict[str, Any], name: str) -> complex:
    p = next(p for p in report["probes"] if p["name"] == name)
    return _v(res, p["plus"], p["minus"])


# The resistor circuit beside the square: V2 (1 V) drives R1 (1 kohm) through
# traces rp (y = 1) and rn (y = -1) from x = 30 to x = 40; R1 joins them at
# x = 40. Its 1 mA makes a flux 1000 times weaker than the square's 1 A.
RC_NETLIST = "V2 rp rn AC 1\nR1 rp rn 1k\nRLK rn 0 1meg"


def _rc() -> str:
    s = _trace("rp", [(30, 1), (40, 1)], 0.5) + _trace("rn", [(30, -1), (40, -1)], 0.5)
    s += _pin("V2:p", (30, 1)) + _pin("V2:n", (30, -1))
    s += _pin("R1:1", (40, 1)) + _pin("R1:2", (40, -1))
    return s


TIP_LEAD = [(40, 1, Z_TOP), (40, 1, 10), (42, 1, 10), (42, 0.25, 10)]
GROUND_TIGHT = [(40, -1, Z_TOP), (40, -1, 10), (42, -1, 10), (42, -0.25, 10)]
# The ground lead taken around the square at z = 5 mm: down to y = -15, left to
# x = -15, up to y = 15, right to x = 44, back to y = -1, up and in to the probe.
GROUND_LOOP = [(40, -1, Z_TOP), (40, -1, 5), (40, -15, 5), (-15, -15, 5), (-15, 15, 5),
               (44, 15, 5), (44, -1, 5), (44, -1, 10), (42, -1, 10), (42, -0.25, 10)]


def _probe_loop(tip: Sequence[Point3], ground: Sequence[Point3]) -> list[Point3]:
    """The closed path tip contact -> tip lead -> instrument -> ground lead back
    to the ground contact (then straight back to the tip contact through R1)."""
    return list(tip) + list(reversed(ground))


def test_tight_leads_read_the_resistor(tmp_path: Path) -> None:
    """Leads rising side by side from R1's pads read R1's voltage within 1%
    (their loop, 2 mm x 8.4 mm facing away from the square, picks up almost
    nothing), and the report names the node pair that ngspice wrote."""
    routes = HEAD + _square() + _rc() + _probe("p", (40, 1), (40, -1), TIP_LEAD, GROUND_TIGHT)
    text, res, report = _run(tmp_path, SQUARE_NETLIST.format(f=F, extra=RC_NETLIST), routes)
    vr = _v(res, *_nodes(text, "R1"))
    reading = _reading(res, report, "p")
    assert abs(vr) > 0.5
    assert abs(reading - vr) < 0.01 * abs(vr)
    assert report["probes"][0]["plus"] == "probe_p_tip"
    assert report["probes"][0]["minus"] == "probe_p_gnd"


def test_ground_lead_around_the_flux_adds_its_emf(tmp_path: Path) -> None:
    """The same probe with its ground lead taken around the square reads R1's
    voltage minus j omega M I (Faraday's law), within 2% of the EMF from
    Neumann's formula for the closed probe loop and the square. The report's
    pick-up for the square's [[loop]] (M of the leads, per ampere) agrees with
    the same reference within 2%."""
    loop = (f'[[loop]]\nname = "square"\npath = ["I1:1", "R0:1", "R0:2", "I1:2"]\n'
            f"frequency = {F}\n\n")
    routes = (HEAD + _square() + _rc() + loop
              + _probe("p", (40, 1), (40, -1), TIP_LEAD, GROUND_LOOP))
    text, res, report = _run(tmp_path, SQUARE_NETLIST.format(f=F, extra=RC_NETLIST), routes)
    vr = _v(res, *_nodes(text, "R1"))
    reading = _reading(res, report, "p")
    M = neumann_polygons(_probe_loop(TIP_LEAD, GROUND_LOOP), SQUARE_CURRENT)
    omega = 2 * math.pi * F
    emf = -1j * omega * M * 1.0  # I = 1 A, the square's current in SQUARE_CURRENT's direction
    assert abs(emf) > 0.05 * abs(vr)  # the pick-up is a sizeable part of the reading
    assert abs((reading - vr) - emf) < 0.02 * abs(emf)
    (entry,) = report["probes"][0]["pickup"]
    assert entry["loop"] == "square" and entry["frequency"] == F
    # the loop's path I1:1 -> R0:1 -> R0:2 -> I1:2 runs through the copper from
    # dp at I1 to dp at R0: against the current's direction in SQUARE_CURRENT
    assert entry["mutual"] == pytest.approx(-M, rel=0.02)
    assert entry["pickup_per_ampere"] == pytest.approx(omega * abs(M), rel=0.02)


# The ring of tests/writer/test_faraday_ngspice.py: 40 x 40 mm, net t its top half and
# net b its bottom half, R1 (100 ohm) cutting its left side and R2 (200 ohm) its
# right side at y = 0; the square inside it drives the changing flux.
RING_NETLIST = "R1 t b 100\nR2 t b 200\nRBL b 0 1meg"


def _ring() -> str:
    s = _trace("t", [(-20, 0.5), (-20, 20), (20, 20), (20, 0.5)], 0.5)
    s += _trace("b", [(-20, -0.5), (-20, -20), (20, -20), (20, -0.5)], 0.5)
    s += _pin("R1:1", (-20, 0.5)) + _pin("R1:2", (-20, -0.5))
    s += _pin("R2:1", (20, 0.5)) + _pin("R2:2", (20, -0.5))
    return s


RING_TIP = [(-20, 0.5, Z_TOP), (-20, 0.5, 5), (-21, 0.5, 5)]
RING_GROUND_LEFT = [(-20, -0.5, Z_TOP), (-20, -0.5, 5), (-21, -0.5, 5)]
# along the ring, 1.4 mm above its copper (z = 3 mm), the other way round: down
# its left side, along the bottom, up the right side past R2, along the top and
# down the left side to the instrument, 1 mm from the tip lead's end
RING_GROUND_RIGHT = [(-20, -0.5, Z_TOP), (-20, -0.5, 3), (-20, -20, 3), (20, -20, 3), (20, 20, 3),
                     (-20, 20, 3), (-20, 1.5, 3), (-21, 1.5, 5)]


def test_ground_lead_on_the_other_side_reads_the_other_resistor(tmp_path: Path) -> None:
    """Probe on R1's pads: with the ground lead beside R1 it reads R1's drop;
    taken round the ring along its copper, past R2 (so that it links the
    square's flux as the ring does), it reads R2's drop, though its contacts did
    not move. The two drops differ by the ring's EMF (Faraday's law, Griffiths
    ch. 7). Tolerance 2%: the lead runs 1.4 mm above the ring's centre line, so
    the loop it closes with the ring is a 1.4 mm high band that links little
    of the square's flux."""
    readings = {}
    for side, ground in (("left", RING_GROUND_LEFT), ("right", RING_GROUND_RIGHT)):
        routes = HEAD + _square() + _ring() + _probe("p", (-20, 0.5), (-20, -0.5), RING_TIP, ground)
        text, res, report = _run(tmp_path, SQUARE_NETLIST.format(f=F, extra=RING_NETLIST), routes)
        readings[side] = (_reading(res, report, "p"), _v(res, *_nodes(text, "R1")),
                          _v(res, *_nodes(text, "R2")))
    left, vr1, vr2 = readings["left"]
    assert abs(left - vr1) < 0.02 * abs(vr1)
    right, vr1b, vr2b = readings["right"]
    assert abs(right - vr2b) < 0.02 * abs(vr2b)
    assert abs(vr1 - vr2) > 0.5 * abs(vr1)  # the two sides' drops differ
    assert abs(left - right) > 0.5 * abs(left)


# A resistor along x at height y0, outside the square, carrying no current of
# its own (no source; 1 Mohm to ground for the DC path).
SYM_NETLIST = "R1 ra rb 100\nRLA ra 0 1meg\nRLB rb 0 1meg"


def _sym(y0: float) -> str:
    s = _trace("ra", [(14, y0), (16, y0)], 0.5) + _trace("rb", [(18, y0), (20, y0)], 0.5)
    s += _pin("RLA:1", (14, y0)) + _pin("R1:1", (16, y0))
    s += _pin("R1:2", (18, y0)) + _pin("RLB:1", (20, y0))
    return s


def _sym_leads(y0: float) -> tuple[list[Point3], list[Point3]]:
    """A probe loop in the plane y = y0: leads up 18.4 mm and 13.4 mm, then 10 mm
    and 8 mm along x to the instrument."""
    return ([(16, y0, Z_TOP), (16, y0, 20), (26, y0, 20)],
            [(18, y0, Z_TOP), (18, y0, 15), (26, y0, 15)])


def test_probe_loop_along_the_flux_reads_nothing(tmp_path: Path) -> None:
    """A probe loop in the plane y = 0, the square's plane of mirror symmetry,
    where the square's field has no component across the plane (the geometry
    is symmetric under y -> -y with the current reversed, so B_y = 0 there):
    the reading less R1's voltage (the pick-up) is below 1e-6 of what the same
    loop picks up 8 mm off that plane. There, as a control, the pick-up is
    -j omega M I within 2%, M the line integral of the square's vector
    potential along the leads (Neumann's formula for the open path: tip lead,
    then the ground lead back; the model's lumped R1 and instrument have no
    length, so the 2 mm across R1, which runs along the square's top side and
    links much of the flux there, is left out of both)."""
    readings = {}
    for y0 in (0.0, 8.0):
        tip, ground = _sym_leads(y0)
        routes = HEAD + _square() + _sym(y0) + _probe("p", (16, y0), (18, y0), tip, ground)
        text, res, report = _run(tmp_path, SQUARE_NETLIST.format(f=F, extra=SYM_NETLIST), routes)
        readings[y0] = _reading(res, report, "p") - _v(res, *_nodes(text, "R1"))
    tip, ground = _sym_leads(8.0)
    emf = -1j * 2 * math.pi * F * neumann_polygons(_probe_loop(tip, ground), SQUARE_CURRENT,
                                                   open_p=True)
    assert abs(emf) > 1e-5  # more than 10 uV per ampere of the square's current
    assert abs(readings[8.0] - emf) < 0.02 * abs(emf)
    assert abs(readings[0.0]) < 1e-6 * abs(emf)


FIXTURES = ROUTES_DIR


@pytest.mark.parametrize("own_save", [False, True])
def test_reading_is_saved_beside_the_netlists_own_vectors(tmp_path: Path, own_save: bool) -> None:
    """ngspice writes only the vectors of a deck's .save cards, and .save cards
    add up (checked with ngspice 39, see docs/probes.md): with a .save of its
    own the netlist keeps its list and gains the probe's nodes; without one,
    ngspice still writes every node, the probe's included, and no .save card
    is added (gnucap 0.36 stops reading a deck at one)."""
    deck = (FIXTURES / "probe_resistor.cir").read_text()
    if own_save:
        deck = deck.replace(".end", ".save v(a)\n.end")
    text, res, report = _run(tmp_path, deck, (FIXTURES / "probe_resistor.routes.toml").read_text())
    (p,) = report["probes"]
    names = set(res.last.vectors)
    assert {f"v({p['plus']})", f"v({p['minus']})", "v(a)"} <= names
    assert ("v(b)" in names) is not own_save
    assert text.count(".save") == (2 if own_save else 0)


def test_ring_reads_the_probe(tmp_path: Path) -> None:
    """``parasite ring --probe NAME`` takes the probe's reading as the simulated
    waveform (a step through R1 seen across the probe's instrument); an unknown
    name is an input error naming the routes file's probes."""
    from click.testing import CliRunner

    from parasite.cli import main

    deck = (FIXTURES / "probe_resistor.cir").read_text().replace(
        "V1 a 0 DC 0 AC 1", "V1 a 0 PULSE(0 1 10n 1n 1n 200n 400n)").replace(
        ".ac lin 1 1meg 1meg", ".tran 0.1n 600n")
    net, routes = tmp_path / "p.cir", tmp_path / "p.routes.toml"
    net.write_text(deck)
    routes.write_text((FIXTURES / "probe_resistor.routes.toml").read_text())
    run = CliRunner().invoke(main, ["ring", str(net), str(routes), "--node", "a", "--probe", "P1",
                                    "--format", "json", "--quiet"])
    assert run.exit_code == 0, run.output
    report = json.loads(run.stdout)
    assert report["probe"] == {"name": "p1", "plus": "probe_p1_tip", "minus": "probe_p1_gnd"}
    # R1 and R2 divide the 1 V step in half: the probe across R1 steps by 0.5 V
    (edge, *_) = report["simulations"]["augmented"]["edges"]
    assert edge["step"] == pytest.approx(0.5, rel=0.02)
    bad = CliRunner().invoke(main, ["ring", str(net), str(routes), "--node", "a", "--probe", "p9",
                                    "--quiet"])
    assert bad.exit_code == 1
    assert "no probe named 'p9'; the routes file's probes: 'p1'" in bad.output
