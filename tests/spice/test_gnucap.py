"""The augmented netlist in gnucap 0.36 beside ngspice 39: the same deck, two
independent simulators (the reference outside the project), and the loop
inductance of the report.

gnucap runs each dot card as it reads it, so these checks also hold the
copper block's position: placed before ``.end`` (after ``.print``/``.ac``),
gnucap would simulate the circuit without copper and give 0 H.
"""

from __future__ import annotations

import math
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


# -- a transient through the copper block ---------------------------------------------

STEP_NETLIST = """step test (current ramp through a copper loop)
I1 p n PULSE(0 10m 1n 2n 2n 10n 40n)
R0 p n 1
.options method=gear
.print tran v(p) v(n)
.tran 0.01n 8n 0 0.01n
.end
"""


def _flux_per_ampere(t: np.ndarray, v: np.ndarray, resistance: float) -> float:
    """L = (integral of v - R i dt) / delta i over the 0 -> 10 mA ramp and the
    flat top after it (Faraday's law for a loop of inductance L and resistance
    R: R0 = 1 ohm plus the copper's)."""
    i = np.interp(t, [0, 1e-9, 3e-9, 13e-9], [0, 0, 10e-3, 10e-3])
    y = v - resistance * i
    return float(np.sum((y[1:] + y[:-1]) * np.diff(t)) / 2 / 10e-3)


def test_transient_through_the_copper_in_gnucap_as_in_ngspice(tmp_path: Path) -> None:
    """The rectangle loop driven by a 10 mA current ramp: the flux linkage per
    ampere from gnucap's transient equals the report's loop inductance within
    1%, and so does ngspice's on the same deck (Gear integration in both: with
    the trapezoidal rule gnucap's inductor voltage alternates in sign step by
    step after the ramp, a known trait of that rule; 1% covers the sampled
    integration of a 0.01 ns table). The run goes through gnucap's transient
    with the coupling statements of the block."""
    n, r = _write(tmp_path, STEP_NETLIST, _rectangle_routes(40.0, 30.0, 0.5, 0.3))
    result = augment_files(n, r)
    (loop,) = result.report["loops"]
    table = run_gnucap(result.netlist_bytes, base_dir=tmp_path).table("Time")
    assert table["Time"][-1] == pytest.approx(8e-9)
    sim = run_ngspice(result.netlist_bytes, base_dir=tmp_path)
    t_n = np.asarray(sim.scale)
    v_n = np.asarray(sim.vector("v(n)")) - np.asarray(sim.vector("v(p)"))
    r_loop = 1.0 + loop["resistance"]
    L_gnucap = _flux_per_ampere(table["Time"], table["v(n)"] - table["v(p)"], r_loop)
    L_ngspice = _flux_per_ampere(t_n, v_n, r_loop)
    assert L_gnucap == pytest.approx(loop["inductance"], rel=0.01)
    assert L_ngspice == pytest.approx(loop["inductance"], rel=0.01)


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


def _edge_metrics(t: np.ndarray, v: np.ndarray) -> tuple[float, float]:
    """Peak of the switch node after the rising edge near 2.02 us, and the ring
    frequency from the first 12 crossings of its settled level after the peak
    (the waveform resampled every 0.01 ns)."""
    keep = (t >= 2.0e-6) & (t <= 2.2e-6)
    t, v = t[keep], v[keep]
    i = int(np.argmax(v))
    grid = np.arange(t[i], t[-1], 0.01e-9)
    y = np.interp(grid, t, v)
    y = y - np.mean(y[len(y) // 2:])
    side = np.signbit(y)
    crossings = grid[1:][side[1:] != side[:-1]][:12]
    return float(v[i]), float((len(crossings) - 1) / 2 / (crossings[-1] - crossings[0]))


@pytest.mark.ngspice
def test_demo_transient_in_gnucap_as_in_ngspice(tmp_path: Path) -> None:
    """The demo's board on the portable copy of its netlist (level-1 MOSFETs,
    fixed output capacitance: gnucap 0.36 has no VDMOS model), augmented and run
    in both simulators: the switch node's peak after the rising edge agrees
    within 1% and its ring frequency within 1% (ngspice 39 is the reference; in
    runs here the two agreed to 0.1%). The ring is the copper's: without the
    copper there is no ring at all on this netlist."""
    demo = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
    result = augment_files(str(demo / "buck_portable.cir"), str(demo / "buck.routes.toml"))
    table = run_gnucap(result.netlist_bytes, base_dir=tmp_path, timeout=900).table("Time")
    sim = run_ngspice(result.netlist_bytes, base_dir=tmp_path)
    peak_g, f_g = _edge_metrics(np.asarray(table["Time"]), np.asarray(table["v(sw)"]))
    peak_n, f_n = _edge_metrics(np.real(np.asarray(sim.scale)), np.real(np.asarray(sim.vector("v(sw)"))))
    assert 100e6 < f_n < 1e9 and peak_n > 48.2  # it rings, above the 48 V rail
    assert peak_g == pytest.approx(peak_n, rel=0.01)
    assert f_g == pytest.approx(f_n, rel=0.01)
