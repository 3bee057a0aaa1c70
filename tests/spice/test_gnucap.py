"""The augmented netlist in gnucap 0.36 beside ngspice 39: the same deck, two
independent simulators (the reference outside the project), and the loop
inductance of the report.

gnucap runs each dot card as it reads it, so these checks also hold the
copper block's position: placed before ``.end`` (after ``.print``/``.ac``),
gnucap would simulate the circuit without copper and give 0 H.
"""

from __future__ import annotations

import math
import re
import shutil
from pathlib import Path

import numpy as np
import pytest

from parasite.augment import augment_files
from parasite.spice import run_ngspice
from parasite.spice.gnucap import parse_number, run_gnucap

pytestmark = [
    pytest.mark.gnucap,
    pytest.mark.ngspice,
    pytest.mark.skipif(shutil.which("gnucap") is None, reason="gnucap is not installed"),
]

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "fixtures" / "demo"
F_AC = 1e6  # Hz

HEAD = 'format = "parasite-routes/1"\nunits = "mm"\n\n[layers.top]\nz = 1.565\nthickness = 0.035\n\n'


def _write(tmp: Path, netlist: str, routes: str) -> tuple[str, str]:
    n, r = tmp / "c.cir", tmp / "c.routes.toml"
    n.write_text(netlist)
    r.write_text(routes)
    return str(n), str(r)


def _trace(net: str, pts: list[tuple[float, float]], width: float, layer: str = "top") -> str:
    p = ", ".join(f"[{x:.6f}, {y:.6f}]" for x, y in pts)
    return f'[[trace]]\nnet = "{net}"\nlayer = "{layer}"\nwidth = {width}\npoints = [{p}]\n\n'


def _pin(term: str, at: tuple[float, float], layer: str = "top") -> str:
    return f'[[pin]]\nterminal = "{term}"\nat = [{at[0]:.6f}, {at[1]:.6f}]\nlayer = "{layer}"\n\n'


# The rectangle of the ngspice loop check (tests of augment against Grover's
# rectangle formula): 40 x 30 mm of 0.5 mm trace, cut for the port and R0.
# Both simulators print 12 digits (.options numdgt, read by both).
PORT_NETLIST = """port test (AC drive of a copper loop)
I1 p n AC 1
R0 p n 1e-6
RLEAK n 0 1meg
.options numdgt=12
.print ac vr(p) vi(p) vr(n) vi(n)
.ac lin 1 {f} {f}
.end
"""


def _rectangle_routes(a: float, b: float, w: float, h: float) -> str:
    lo, hi = b / 2 - h / 2, b / 2 + h / 2
    p_pts = [(0, lo), (0, 0), (a, 0), (a, lo)]
    n_pts = [(a, hi), (a, b), (0, b), (0, hi)]
    return (HEAD + _trace("p", p_pts, w) + _trace("n", n_pts, w)
            + _pin("I1:p", (0, lo)) + _pin("R0:1", (a, lo))
            + _pin("I1:n", (0, hi)) + _pin("R0:2", (a, hi))
            + f'[[loop]]\nname = "rect"\npath = ["I1:p", "R0:1", "R0:2", "I1:n"]\n'
              f'frequency = {F_AC}\n')


def _ngspice_z(deck: bytes, base: Path, plus: str, minus: str) -> complex:
    res = run_ngspice(deck, base_dir=base)
    v = {n: complex(np.asarray(res.vector(f"v({n})"))[0]) for n in (plus, minus) if n != "0"}
    return v.get(plus, 0j) - v.get(minus, 0j)


def _gnucap_z(deck: bytes, base: Path, plus: str, minus: str) -> complex:
    table = run_gnucap(deck, base_dir=base).table("Freq")
    v = {n: complex(table[f"vr({n})"][0], table[f"vi({n})"][0]) for n in (plus, minus) if n != "0"}
    return v.get(plus, 0j) - v.get(minus, 0j)


def test_rectangle_loop_in_gnucap_as_in_ngspice(tmp_path: Path) -> None:
    """The rectangle loop of the ngspice check: Im(V/I)/omega of the augmented
    netlist in gnucap equals the report's loop inductance within 0.2% (the
    issue's tolerance; the coupling threshold chosen per board moves the loop by
    at most 1% by design, measured here at under 0.1% as in the ngspice check),
    and so does ngspice's on the same deck. The two simulators solve the same
    linear equations and print 12 digits: they agree within 1e-6 relative."""
    n, r = _write(tmp_path, PORT_NETLIST.format(f=F_AC), _rectangle_routes(40.0, 30.0, 0.5, 0.3))
    result = augment_files(n, r)
    (loop,) = result.report["loops"]
    w = 2 * math.pi * F_AC
    z_gnucap = _gnucap_z(result.netlist_bytes, tmp_path, "n", "p")
    z_ngspice = _ngspice_z(result.netlist_bytes, tmp_path, "n", "p")
    assert z_gnucap.imag / w == pytest.approx(loop["inductance"], rel=2e-3)
    assert z_ngspice.imag / w == pytest.approx(loop["inductance"], rel=2e-3)
    assert z_gnucap == pytest.approx(z_ngspice, rel=1e-6)
    assert loop["inductance"] > 50e-9  # copper is there: without it the loop is 1e-6 ohm


MESH_NET = """* meshed copper driven by an AC current port (test scenario)
I1 0 a DC 0 AC 1
V2 a 0 DC 0
.options numdgt=12
.print ac vr(a) vi(a)
.ac lin 1 {f} {f}
.end
"""


def _mesh_routes(frequency: str) -> str:
    """The meshed net of the ngspice loop check: a ladder of three 10 x 10 mm
    cells (four rungs) on the top layer from I1 to V2, returning on the bottom
    layer."""
    head = HEAD + "[layers.bottom]\nz = 0.0\nthickness = 0.035\n\n"
    traces = [("a", [(0, 0), (30, 0)], 1.0, "top"), ("a", [(0, 10), (30, 10)], 1.0, "top")]
    traces += [("a", [(x, 0), (x, 10)], 0.5, "top") for x in (0, 10, 20, 30)]
    traces += [("0", [(30, 10), (30, -2), (0, -2), (0, 0)], 2.0, "bottom")]
    text = head + "".join(_trace(net, pts, wid, lay) for net, pts, wid, lay in traces)
    text += (_pin("I1:n", (0, 0)) + _pin("V2:p", (30, 10)) + _pin("I1:p", (0, 0), "bottom")
             + _pin("V2:n", (30, 10), "bottom"))
    return text + (f'[[loop]]\nname = "mesh"\npath = ["I1:n", "V2:p", "V2:n", "I1:p"]\n'
                   f"frequency = {frequency}\n")


@pytest.mark.parametrize("frequency", ["1e6", "1e8"])
def test_meshed_net_in_gnucap_as_in_ngspice(tmp_path: Path, frequency: str) -> None:
    """A meshed net (current divides among four rungs): the report's loop
    inductance and resistance equal Im(V/I)/omega and Re(V/I) of the augmented
    netlist (every coupling written, |k| >= 1e-6) in gnucap within 0.2% (the
    issue's tolerance; measured far closer), and in ngspice on the same deck
    within 1e-6 (the ngspice loop check's tolerance: 10 significant digits in
    the netlist)."""
    f = float(frequency)
    n, r = _write(tmp_path, MESH_NET.format(f=frequency), _mesh_routes(frequency))
    result = augment_files(n, r, min_coupling=1e-6, frequency=f)
    (loop,) = result.report["loops"]
    w = 2 * math.pi * f
    z_gnucap = _gnucap_z(result.netlist_bytes, tmp_path, "a", "0")
    z_ngspice = _ngspice_z(result.netlist_bytes, tmp_path, "a", "0")
    assert z_gnucap.imag / w == pytest.approx(loop["inductance"], rel=2e-3)
    assert z_gnucap.real == pytest.approx(loop["resistance"], rel=2e-3)
    assert z_ngspice.imag / w == pytest.approx(loop["inductance"], rel=1e-6)
    assert z_ngspice.real == pytest.approx(loop["resistance"], rel=1e-6)


# -- the demo's transient ------------------------------------------------------------

# gnucap 0.36 has no VDMOS model (ngspice's three-node power MOSFET) and no
# .save card, and prints only the .print cards read before the analysis. The
# gnucap edition of the demo netlist swaps the two invented VDMOS models for
# level-1 MOSFETs with the body tied to the source (drain-body junction: the
# body diode and Coss, 2.5 nF at 0 V as the VDMOS cjo), drops .save, puts
# .print before .tran and prints every 0.1 ns. The copper is untouched.
LEVEL1 = (".model {name} nmos (level=1 vto=3 kp=80 lambda=2m rd=1.5m rs=0.5m cgso=3n "
          "cgdo=100p cbd=2.5n pb=0.8 mj=0.5 fc=0.5 is=10p)")


def gnucap_edition(text: str) -> str:
    """The demo netlist with the changes above; each must apply exactly (the
    test fails loudly when the demo changes)."""
    text, n = re.subn(r"^\.model (M[HL]S) VDMOS.*?(?=\n(?!\+))",
                      lambda m: LEVEL1.format(name=m.group(1)), text, flags=re.S | re.M)
    assert n == 2, "the demo's two VDMOS models"
    text, n = re.subn(r"^(M\d\s+\S+\s+\S+\s+(\S+))(\s+M[HL]S)\b", r"\1 \2\3", text, flags=re.M)
    assert n == 2, "the demo's two MOSFET cards"
    text, n = re.subn(r"^\.save .*\n", "", text, flags=re.M)
    assert n == 1, "the demo's .save card"
    text, n = re.subn(r"^\.tran 1n (.*)\n(\.print tran .*\n)", r"\2.tran 0.1n \1\n", text, flags=re.M)
    assert n == 1, "the demo's .tran and .print cards"
    return text


def ring_frequency(t: np.ndarray, v: np.ndarray, t0: float, span: float) -> float:
    """The ring frequency (Hz) of ``v`` after time ``t0``: the mean spacing of its
    crossings of the mean level over ``span`` seconds, resampled on a uniform
    0.05 ns grid (linear interpolation; common practice)."""
    grid = np.arange(t0, t0 + span, 0.05e-9)
    x = np.interp(grid, t, v)
    x = x - x.mean()
    up = np.flatnonzero((x[:-1] < 0) & (x[1:] >= 0))
    times = grid[up] - x[up] * (grid[up + 1] - grid[up]) / (x[up + 1] - x[up])
    assert len(times) >= 3, "the switch node must ring"
    return float((len(times) - 1) / (times[-1] - times[0]))


@pytest.mark.slow
def test_demo_augmented_netlist_rings_alike_in_gnucap_and_ngspice(tmp_path: Path) -> None:
    """The demo (gnucap edition, above) augmented with its copper runs a
    transient in gnucap. Its switch node swings between 0 and 48 V and rings
    after the rising edge at 2.02 us at the frequency ngspice gives on the same
    deck within 3% (two simulators, different step control and integration
    order: a few % is common practice for a ring's frequency; measured 0.x%)."""
    (tmp_path / "buck.cir").write_text(gnucap_edition((DEMO / "buck.cir").read_text()))
    (tmp_path / "buck.routes.toml").write_text((DEMO / "buck.routes.toml").read_text())
    result = augment_files(str(tmp_path / "buck.cir"), str(tmp_path / "buck.routes.toml"))
    deck = result.netlist_bytes
    assert b".save" not in deck
    table = run_gnucap(deck, base_dir=tmp_path, timeout=600).table("Time")
    t, sw = table["Time"], table["v(sw)"]
    assert t[-1] == pytest.approx(3e-6)
    assert 45.0 < np.max(sw[t > 1e-6]) < 100.0 and np.min(sw[t > 1e-6]) < 1.0
    sim = run_ngspice(deck, base_dir=tmp_path, timeout=600)
    tn, swn = np.asarray(sim.scale), np.asarray(sim.vector("v(sw)"))
    edge = 2.0e-6 + 20e-9  # VDRV1 turns the high side on 20 ns into each 2 us period
    f_gnucap = ring_frequency(t, sw, edge + 5e-9, 40e-9)
    f_ngspice = ring_frequency(tn, swn, edge + 5e-9, 40e-9)
    assert 20e6 < f_ngspice < 2e9
    assert f_gnucap == pytest.approx(f_ngspice, rel=0.03)


def test_gnucap_numbers_are_read_with_their_suffixes() -> None:
    """gnucap prints SI suffixes (``Meg`` mega, ``m`` milli, ``K`` kilo; gnucap
    0.36 output seen in runs) and exponents."""
    assert parse_number("1.Meg") == pytest.approx(1e6)
    assert parse_number("-390.63u") == pytest.approx(-390.63e-6)
    assert parse_number("27.") == 27.0
    assert parse_number("1.K") == pytest.approx(1e3)
    assert parse_number("-10.E+12") == pytest.approx(-1e13)
    assert parse_number("12.5m") == pytest.approx(12.5e-3)
    with pytest.raises(ValueError):
        parse_number("v(a)")
