"""The reduced model of a broadband network (every branch its R-L ladder), checked by
ngspice's AC analysis against the full ladder netlist with every coupling written
(invented board: three loops with meshed ladder returns, ``bench_threshold.py``)."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

from parasite.network import NetworkOptions, build_network
from parasite.network.ladders import BroadbandOptions, branch_ladders
from parasite.network.reduce_choice import choose_model
from parasite.pipeline import extract, inputs_from_text
from parasite.spice import run_ngspice
from parasite.writer import write_netlist
from tests.boards import ROOT

sys.path.insert(0, str(ROOT / "benchmarks"))
from bench_threshold import board  # noqa: E402

pytestmark = pytest.mark.ngspice


def _ac(text: str, tmp_path: Path) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    sim = run_ngspice(text.replace("\n.end", "\n.ac dec 5 1k 1g\n.end"), base_dir=tmp_path)
    return (np.real(np.asarray(sim.scale)),
            {n: np.asarray(sim.vector(n)) for n in ("v(a0)", "v(a1)", "v(a2)")})


def test_reduced_ladder_network_matches_the_full_one_in_ngspice(tmp_path: Path) -> None:
    """Loop 0 driven by 1 A AC; the driven loop's voltage and the two victims' pick-up
    from the reduced broadband model are within 1% in magnitude and 1 degree in phase
    of the full ladder netlist (every branch's ladder, every coupling) from 1 kHz to
    1 GHz, both solved by ngspice (the issue's tolerance); the reduced model is much
    smaller than the ladders it replaces and passes its own passivity check."""
    routes, netlist = board(3, ladder=True)
    netlist = netlist.replace("{src0}", "AC 1").replace("{src1}", "0").replace("{src2}", "0")
    network = build_network(extract(inputs_from_text(netlist + ".end\n", routes)),
                            NetworkOptions(min_coupling=0.0))
    ladders = branch_ladders(network, BroadbandOptions())
    chosen, red, _ = choose_model(network, "reduced", ladders=ladders)
    assert chosen == "reduced" and red is not None and red.passive
    assert red.reduced_size * 2 <= red.full_size
    assert red.model.order < red.model.full_order
    full = write_netlist(network, ladders, None).netlist_bytes.decode()
    reduced = write_netlist(network, ladders, red).netlist_bytes.decode()
    assert ".subckt parasite_copper" in reduced.lower()
    f_full, v_full = _ac(full, tmp_path)
    f_red, v_red = _ac(reduced, tmp_path)
    assert np.allclose(f_full, f_red, rtol=1e-9) and f_full[-1] == pytest.approx(1e9)
    for name in v_full:
        a, b = v_red[name], v_full[name]
        assert np.all(np.abs(np.abs(a) / np.abs(b) - 1) <= 0.01), name
        assert np.all(np.abs(np.angle(a / b, deg=True)) <= 1.0), name
