"""Probes on the fast path (``report --inductance fast``: the partial inductance as an
operator) against the dense path (``--inductance dense``).

Reference: the dense path's probe entries (:func:`parasite.probes.probe_report` on the
dense matrix), themselves checked against Neumann's formula for filament polygons
(Grover, *Inductance Calculations*, 1946, ch. 1-2, integrated by scipy's ``dblquad``)
and against ngspice's reading of the augmented netlist (Faraday's law) in
tests/probes/test_probes_ngspice.py.

The board (invented): fixtures/routes/pour_plane (a 20 mm trace 0.2 mm over a meshed
ground pour, its loop at 100 MHz) with two 10x probes from the trace to the pour,
written in tmp_path: ``fold`` with its ground lead folded back over the trace (a long
ground lead), ``span`` with both leads in the vertical plane of the trace.

Tolerances. The leads' loop inductance comes from the exact block of the leads' own
segments on both paths: equal to rounding (1e-9). The pick-up ``M = (L v)^T c`` uses the
loop's currents ``c``; unlike the loop inductance (stationary in the currents, within
1e-3 like every fast loop), ``M`` changes to first order with them, so it carries the
board operator's error on the loop copper. Measured on this board with the board
path's operator (far field on the layer grids, the probe leads off the grid with their
pairs exact): ``M`` within 3.6e-5 for ``fold`` and 1.2e-5 for ``span`` (before the grid,
on the multipole sums' centre lines, 7.5e-4 and 1.15e-3): 2e-4 here. With the
operator's accurate near field (section ratio 10, near scale 1.0) the same function
agrees within 1.3e-5 (measured), checked at 0.1 % below.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from parasite.extract.operator import DenseInductance, FastInductance
from parasite.loops import loop_results
from parasite.loops_operator import loop_results_operator
from parasite.naming import NameAllocator
from parasite.network.names import node_names
from parasite.pipeline import extract, load_inputs
from parasite.probes import probe_report
from parasite.report import report_text
from tests.boards import ROUTES

# the trace's top face is at z = 0.27 mm, the pour's at 0.035 mm (pour_plane's layers)
PROBES = """
[[probe]]
name = "fold"
tip = { layer = "top", at = [12, 5] }
ground = { layer = "gnd", at = [12, 8] }
tip_lead = { points = [[12, 5, 0.27], [12, 5, 8], [13, 5, 8]], radius = 0.2 }
ground_lead = { points = [[12, 8, 0.035], [12, 8, 6], [18, 8, 6], [18, 5, 8], [13.5, 5, 8]], radius = 0.2 }
instrument = "10x"

[[probe]]
name = "span"
tip = { layer = "top", at = [8, 5] }
ground = { layer = "gnd", at = [16, 9] }
tip_lead = { points = [[8, 5, 0.27], [8, 5, 6], [12, 5, 6]], radius = 0.2 }
ground_lead = { points = [[16, 9, 0.035], [16, 9, 6], [12.5, 5, 6]], radius = 0.2 }
instrument = { resistance = "1meg", capacitance = "10p", damping = 50 }
"""
EXACT = ("name", "plus", "tip_end", "minus", "tip_net", "ground_net", "tip_contact",
         "ground_contact", "instrument", "tip_lead_length", "ground_lead_length")
LEADS = ("lead_inductance", "lead_resistance", "lead_resonance", "lead_damping_ratio")
PICKUP = ("mutual", "mutual_magnitude", "pickup_per_ampere", "pickup_to_ring")
PICKUP_RTOL = 2e-4  # module docstring


@pytest.fixture(scope="module")
def board(tmp_path_factory: pytest.TempPathFactory) -> tuple[str, str]:
    folder = tmp_path_factory.mktemp("probes_fast")
    cir, routes = folder / "board.cir", folder / "board.routes.toml"
    cir.write_text((ROUTES / "pour_plane.cir").read_text())
    routes.write_text((ROUTES / "pour_plane.routes.toml").read_text() + PROBES)
    return str(cir), str(routes)


def _report(board: tuple[str, str], tmp: Path, how: str) -> dict[str, Any]:
    out = tmp / f"{how}.json"
    res = subprocess.run([sys.executable, "-m", "parasite", "report", *board, "--format",
                          "json", "--inductance", how, "-o", str(out), "-q"],
                         capture_output=True, text=True, timeout=600, check=False)
    assert res.returncode == 0, res.stderr
    return json.loads(out.read_text())


def test_fast_probe_entries_against_dense(board: tuple[str, str], tmp_path: Path) -> None:
    """Through the command line: the fast report lists the probes with the dense
    report's keys and values (module docstring for the tolerances), and no longer
    names the probes among what it leaves out."""
    d, f = _report(board, tmp_path, "dense"), _report(board, tmp_path, "fast")
    assert f["inductance"]["method"] == "fast"
    assert "probes" not in {e["what"] for e in f["inductance"]["left_out"]}
    assert [p["name"] for p in d["probes"]] == [p["name"] for p in f["probes"]] == ["fold",
                                                                                   "span"]
    for a, b in zip(f["probes"], d["probes"], strict=True):
        assert a.keys() == b.keys()
        assert {k: a[k] for k in EXACT} == {k: b[k] for k in EXACT}
        for k in LEADS:
            assert a[k] == pytest.approx(b[k], rel=1e-9, abs=0), k
        assert b["lead_inductance"] > 1e-9  # leads of centimetres: nanohenries
        for pa, pb in zip(a["pickup"], b["pickup"], strict=True):
            assert pa.keys() == pb.keys()
            assert (pa["loop"], pa["frequency"]) == (pb["loop"], pb["frequency"]) == (
                "load loop", 100e6)
            assert pa["loop_inductance"] == pytest.approx(pb["loop_inductance"], rel=1e-3, abs=0)
            assert abs(pb["mutual"]) > 1e-12  # a pick-up to compare, not a zero
            for k in PICKUP:
                assert pa[k] == pytest.approx(pb[k], rel=PICKUP_RTOL, abs=0), (a["name"], k)
    # the damping resistance and the reading behind it, as on the dense path
    assert f["probes"][1]["plus"] == "probe_span_tip_in"
    text = report_text(f)
    assert "Probes: 2" in text and "loop 'load loop': M = " in text


def test_probe_report_with_the_accurate_operator(board: tuple[str, str]) -> None:
    """The shared :func:`parasite.probes.probe_report` on the operator with its accurate
    near field (section ratio 10, near scale 1.0) and GMRES loop currents: every probe
    entry within 0.1 % of the dense matrix's (measured 1.3e-5 on the pick-up)."""
    inputs = load_inputs(*board, "fast")
    graph, netlist = inputs.graph, inputs.netlist
    dense = extract(inputs)
    op = FastInductance(graph.arrays)
    names = node_names(graph, NameAllocator(netlist.node_names()))
    ref = probe_report(graph, DenseInductance(dense.L), dense.R, names,
                       loop_results(graph, netlist, dense.L, dense.R), None)
    got = probe_report(graph, op, dense.R, names,
                       loop_results_operator(graph, netlist, op, dense.R), None)
    assert len(ref) == len(got) == 2
    for a, b in zip(got, ref, strict=True):
        for k in LEADS:
            assert a[k] == pytest.approx(b[k], rel=1e-9, abs=0)
        for pa, pb in zip(a["pickup"], b["pickup"], strict=True):
            for k in PICKUP:
                assert pa[k] == pytest.approx(pb[k], rel=1e-3, abs=0)
    m = np.array([p["pickup"][0]["mutual"] for p in ref])
    assert np.all(np.abs(m) > 1e-12)


def test_probe_without_loops(tmp_path: Path) -> None:
    """fixtures/routes/probe_resistor (a probe, no [[loop]]): the fast report gives the
    leads' values of the dense one (the same exact block) and no pick-up entries."""
    board = (str(ROUTES / "probe_resistor.cir"), str(ROUTES / "probe_resistor.routes.toml"))
    d, f = _report(board, tmp_path, "dense"), _report(board, tmp_path, "fast")
    (a,), (b,) = f["probes"], d["probes"]
    assert a["pickup"] == b["pickup"] == []
    assert {k: a[k] for k in EXACT} == {k: b[k] for k in EXACT}
    for k in LEADS:
        assert a[k] == pytest.approx(b[k], rel=1e-9, abs=0), k
