"""Benchmark: the probes' section of ``report --inductance fast`` (:func:`parasite.probes.
probe_report` on the inductance operator) against its floor, one operator product.

The board (invented test data): the meshed power stage of ``bench_board_scale.py`` with
two short traces joining its pours (``sw`` on ``mid``, ``0`` on ``bottom``) and two 10x
probes between them, one with tight leads, one with a ground lead taken 25 mm round.
In one process: the operator (exact near field, multipole far field), the three loops'
GMRES solves, then the probe section, timed against one product of the operator with
the probes' lead vectors (the product the section needs; the leads' own dense block
and the currents' sum are the rest). Target: the section within 3 products, small
beside the loop solves.

Run: ``.venv/bin/python benchmarks/bench_probes_fast.py [--sizes 5000 20000]``.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.bench_board_scale import cell_for, write_board  # noqa: E402

PROBES = """
[[trace]]
net = "sw"
layer = "mid"
width = 1.0
points = [[30, 20], [32, 20]]

[[trace]]
net = "0"
layer = "bottom"
width = 1.0
points = [[30, 22], [32, 22]]

[[probe]]
name = "tight"
tip = { layer = "mid", at = [31, 20] }
ground = { layer = "bottom", at = [31, 22] }
tip_lead = { points = [[31, 20, 1.035], [31, 20, 10], [32, 20.5, 10]], radius = 0.2 }
ground_lead = { points = [[31, 22, 0.035], [31, 22, 10], [32, 21.5, 10]], radius = 0.2 }
instrument = "10x"

[[probe]]
name = "long-ground"
tip = { layer = "mid", at = [30.5, 20] }
ground = { layer = "bottom", at = [30.5, 22] }
tip_lead = { points = [[30.5, 20, 1.035], [30.5, 20, 12], [33, 20.5, 12]], radius = 0.2 }
ground_lead = { points = [[30.5, 22, 0.035], [30.5, 22, 5], [5, 22, 5], [5, 5, 5],
                          [33, 5, 8], [33, 19.5, 12]], radius = 0.2 }
instrument = "10x"
"""


def one(folder: Path, n: int) -> None:
    from parasite.loops_operator import loop_results_operator
    from parasite.naming import NameAllocator
    from parasite.network.names import node_names
    from parasite.network.ports import probe_nodes
    from parasite.pipeline import extract_fast, load_inputs
    from parasite.probes import _loop_vector, probe_report

    cir, routes = write_board(folder, cell_for(n))
    Path(routes).write_text(Path(routes).read_text() + PROBES)
    inputs = load_inputs(cir, routes, "fast")
    graph, netlist = inputs.graph, inputs.netlist
    t0 = time.perf_counter()
    fx = extract_fast(inputs)
    t_op = time.perf_counter() - t0
    t0 = time.perf_counter()
    results = loop_results_operator(graph, netlist, fx.op, fx.R)
    t_loops = time.perf_counter() - t0
    names = node_names(graph, NameAllocator(netlist.node_names()))
    V = np.stack([_loop_vector(graph, pn) for pn in probe_nodes(graph)], axis=1)
    fx.op.matvec(V)  # warm: the multipole library's first call
    t_floor = min(_timed(lambda: fx.op.matvec(V)) for _ in range(3))
    t_probe = min(_timed(lambda: probe_report(graph, fx.op, fx.R, names, results, None))
                  for _ in range(3))
    entries = probe_report(graph, fx.op, fx.R, names, results, None)
    picks = "; ".join(f"{p['name']}: " + ", ".join(
        f"{e['loop']} {1e12 * e['mutual']:.2f} pH" for e in p["pickup"]) for p in entries)
    print(f"{len(graph.segments):>7} {t_op:8.1f} {t_loops:8.1f} {t_floor:8.3f} {t_probe:8.3f} "
          f"{t_probe / t_floor:6.2f}  {picks}", flush=True)


def _timed(f: object) -> float:
    t0 = time.perf_counter()
    f()  # type: ignore[operator]
    return time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[5000])
    args = ap.parse_args()
    print(f"{'N':>7} {'op s':>8} {'loops s':>8} {'floor s':>8} {'probes s':>8} {'ratio':>6}  "
          "pick-up M per loop")
    with tempfile.TemporaryDirectory() as tmp:
        for n in args.sizes:
            one(Path(tmp), n)
    print(f"(cores: {os.cpu_count()}; floor: one operator product of the probes' lead "
          "vectors, best of 3; invented board)")


if __name__ == "__main__":
    main()
