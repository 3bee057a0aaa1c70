"""Broadband ladders in the augmented netlist, checked by ngspice's own AC and transient
analyses (invented test board: one 20 mm trace over a ground plane)."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from parasite.augment import augment_files
from parasite.network.ladders import BroadbandOptions
from parasite.spice import run_ngspice
from tests.boards import ONE_LAYER, pin, trace, write

pytestmark = pytest.mark.ngspice

PLANE = "[layers.in1]\nz = 1.2\nthickness = 0.035\nplane = \"0\"\n\n"
CHECK_F = (1e4, 1e6, 1e8, 1e9)


def _board(tmp_path: Path, source: str, extra: str = "") -> tuple[str, str]:
    """20 mm x 0.5 mm trace on ``top``, 0.33 mm over the plane of net 0; I1 drives node
    ``a`` at x = 0, V0 (0 V) closes the loop to 0 at x = 20 mm."""
    routes = (ONE_LAYER + PLANE + trace("a", [(0, 0), (20, 0)], 0.5)
              + pin("I1:2", (0, 0)) + pin("V0:1", (20, 0)))
    netlist = f"* ladder test (invented board)\n{source}\nV0 a 0 0\n{extra}.end\n"
    return (write(tmp_path, "t.cir", netlist),
            write(tmp_path, "t.routes.toml", routes))


def test_ac_impedance_matches_cross_section(tmp_path: Path) -> None:
    """Re(Z) and Im(Z)/omega of the trace's loop in ngspice's AC analysis of the written
    ladder are within 2% of the R(f), L(f) the ladder was fitted to (the cross-section
    result: DC partial values plus the cross-section solve's change, itself checked
    against a scikit-fem eddy-current FEM and the Bessel solution in tests/extract) at
    10 kHz, 1 MHz, 100 MHz and 1 GHz. 2%: the issue's tolerance; the fit's own error
    (report) is below 1%. The low-frequency R is also checked against Ohm's law
    rho l / (w t) (common practice) within 1%, and R at 1 GHz lies between two
    surface-resistance estimates (R_s = rho / delta, Ramo, Whinnery and Van Duzer 1994):
    current spread over the trace's whole perimeter, R_s l / (2 (w + t)) (lower), and
    current on the facing faces of trace and plane only, 2 R_s l / w (upper)."""
    cir, routes = _board(tmp_path, "I1 0 a AC 1")
    res = augment_files(cir, routes, broadband=BroadbandOptions())
    bb = res.report["broadband"]
    assert bb["max_error_r"] < 0.01 and bb["max_error_l"] < 0.01
    # the target of the single branch
    from parasite.network.ladders import branch_ladders
    assert res.network is not None
    target = branch_ladders(res.network, BroadbandOptions())
    f = target.frequency
    deck = res.netlist_text.replace("\n.end", "\n.ac dec 5 1k 1g\n.end")
    sim = run_ngspice(deck, base_dir=tmp_path)
    fs = np.real(np.asarray(sim.scale))
    v = np.asarray(sim.vector("v(a)"))
    rho, ln, w, t = 1.7241e-8, 20e-3, 0.5e-3, 35e-6
    for fc in CHECK_F:
        k = int(np.argmin(np.abs(fs - fc)))
        assert abs(fs[k] / fc - 1) < 1e-6
        j = int(np.argmin(np.abs(f - fc)))
        z = complex(v[k])
        assert z.real == pytest.approx(target.resistance[0, j], rel=0.02), fc
        assert z.imag / (2 * math.pi * fc) == pytest.approx(target.inductance[0, j], rel=0.02), fc
    z_low = complex(v[int(np.argmin(np.abs(fs - 1e4)))])
    assert z_low.real == pytest.approx(rho * ln / (w * t), rel=0.01)
    delta = math.sqrt(rho / (math.pi * 4e-7 * math.pi * 1e9))
    z_top = complex(v[int(np.argmin(np.abs(fs - 1e9)))])
    rs = rho / delta
    assert rs * ln / (2 * (w + t)) < z_top.real < 2 * rs * ln / w


def test_transient_is_passive_and_decays(tmp_path: Path) -> None:
    """A current pulse into the trace with 1 nF across its port: the energy taken by the
    copper, int v(a) i(V0) dt, never goes negative (a passive one-port absorbs energy
    from a zero state: energy delivered = dissipated + stored >= 0; Desoer and Kuh,
    *Basic Circuit Theory*, 1969, passivity, from memory), and the LC ring's successive
    peaks shrink (no growing oscillation). Tolerance: 1e-6 of the largest energy for
    ngspice's integration error."""
    src = "I1 0 a PULSE(0 1 1n 1n 1n 5n 1)\nC1 a 0 1n"
    cir, routes = _board(tmp_path, src)
    res = augment_files(cir, routes, broadband=BroadbandOptions())
    deck = res.netlist_text.replace("\n.end", "\n.tran 2p 60n 0 2p\n.end")
    sim = run_ngspice(deck, base_dir=tmp_path)
    tt = np.real(np.asarray(sim.scale))
    va = np.real(np.asarray(sim.vector("v(a)")))
    ib = np.real(np.asarray(sim.vector("i(v0)")))
    p = va * ib
    energy = np.concatenate([[0.0], np.cumsum(0.5 * (p[1:] + p[:-1]) * np.diff(tt))])
    scale = max(float(np.max(np.abs(energy))), 1e-30)
    assert np.min(energy) >= -1e-6 * scale
    after = tt > 8e-9
    x = va[after]
    ax = np.abs(x)
    peaks = [ax[i] for i in range(1, x.size - 1) if ax[i] >= ax[i - 1] and ax[i] > ax[i + 1]]
    assert len(peaks) >= 3
    assert all(b <= a * (1 + 1e-3) for a, b in zip(peaks, peaks[1:], strict=False))
