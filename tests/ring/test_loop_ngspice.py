"""A series loop through a capacitor rings at the frequency that the loop
inductance from the report predicts."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from parasite.augment import augment_files
from parasite.spice import run_ngspice
from tests.boards import ONE_LAYER as HEAD
from tests.boards import pin as _pin
from tests.boards import trace as _trace

pytestmark = pytest.mark.ngspice

NETLIST = """series loop through a capacitor, stepped
V1 n p PULSE(0 1 10n 100p 100p 1 2)
C1 p n 1n
RLEAK n 0 1meg
.tran 0.1n 1.5u 0 0.1n
.end
"""


def _zero_crossing_frequency(t: np.ndarray, v: np.ndarray) -> float:
    """Mean frequency from the rising zero crossings (linear interpolation)."""
    s = np.signbit(v)
    idx = np.flatnonzero(s[:-1] & ~s[1:])
    tc = t[idx] - v[idx] * (t[idx + 1] - t[idx]) / (v[idx + 1] - v[idx])
    return (len(tc) - 1) / (tc[-1] - tc[0])


def test_series_loop_rings_at_the_damped_frequency(tmp_path: Path) -> None:
    """A 40 x 30 mm loop of 0.5 mm trace closed through C = 1 nF and stepped
    by V1: the capacitor voltage rings at the damped frequency of a series
    RLC, f = sqrt(1/(L C) - (R / 2L)^2) / (2 pi) (any circuit-theory text,
    e.g. Nilsson & Riedel, *Electric Circuits*, ch. 8), within 2%, with L and
    R the loop values of the report."""
    a, b, h = 40.0, 30.0, 0.3
    lo, hi = b / 2 - h / 2, b / 2 + h / 2
    routes = (HEAD + _trace("p", [(a, lo), (a, 0), (0, 0), (0, lo)], 0.5)
              + _trace("n", [(0, hi), (0, b), (a, b), (a, hi)], 0.5)
              + _pin("C1:1", (a, lo)) + _pin("V1:2", (0, lo)) + _pin("C1:2", (a, hi)) + _pin("V1:1", (0, hi))
              + '[[loop]]\nname = "ring"\npath = ["V1:p", "V1:n", "C1:1", "C1:2"]\nfrequency = 13e6\n')
    (tmp_path / "r.cir").write_text(NETLIST)
    (tmp_path / "r.routes.toml").write_text(routes)
    result = augment_files(str(tmp_path / "r.cir"), str(tmp_path / "r.routes.toml"), frequency=13e6)
    (loop,) = result.report["loops"]
    L, R = loop["inductance"], loop["resistance"]
    f_expected = math.sqrt(1 / (L * 1e-9) - (R / (2 * L)) ** 2) / (2 * math.pi)

    res = run_ngspice(result.netlist_bytes, base_dir=tmp_path)
    t = np.asarray(res.scale)
    vc = np.asarray(res.vector("v(n)")) - np.asarray(res.vector("v(p)"))
    keep = t > 20e-9
    f_sim = _zero_crossing_frequency(t[keep], vc[keep] - 1.0)
    assert f_sim == pytest.approx(f_expected, rel=0.02)
