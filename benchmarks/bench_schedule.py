"""Benchmark of the work the subcommands send through parasite.schedule.run_map: the
reduced model's check of the full copper network, its port impedance at the 42
points of the reduction's frequency grid, computed

* as before: one dense complex solve of the mesh equations per point
  (``port_impedance``), the BLAS on all cores;
* now: one modal decomposition of the mesh block (generalized symmetric
  eigenproblem), then each point a small product through run_map in process;
* the same on a local Dask cluster of 1 and of 2 worker processes (one thread each),
  the modal matrices sent once to each worker (in the time; the cluster start is not).

Each scheduled result is compared byte for byte with the in-process one, and with
the per-point solves (largest relative difference). The boards are the generated
ones of ``bench_threshold.py`` with ladder returns (invented), 12 independent meshes
per loop.

With ``--end-to-end LOOPS``: also ``parasite augment`` of that board (netlist and
report) in process and with ``--scheduler`` on a local cluster of 2 workers, wall
time of the whole command and whether the files are the same bytes.

Run: ``.venv/bin/python benchmarks/bench_schedule.py [LOOPS ...] [--repeat K]
[--end-to-end LOOPS]``.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_threshold import board  # noqa: E402


def _best(fn, repeat: int) -> tuple[float, np.ndarray]:
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def case(loops: int, repeat: int) -> str:
    from distributed import Client, LocalCluster

    from parasite.augment import augment_files
    from parasite.network.reduce import (
        _project,
        _scheduled_impedance,
        frequency_grid,
        mesh_form,
        port_impedance,
    )
    from parasite.network.reduce_choice import port_nodes

    routes, netlist = board(loops, ladder=True)
    with tempfile.TemporaryDirectory() as tmp:
        cir, rt = Path(tmp) / "b.cir", Path(tmp) / "b.routes.toml"
        cir.write_text(netlist + ".end\n")
        rt.write_text(routes)
        net = augment_files(str(cir), str(rt), model="full").network
    form = mesh_form(net.node_from, net.node_to, len(net.graph.nodes), port_nodes(net),
                     net.L, net.R)
    Rf, Lf = _project(form, None)
    P, freqs = form.T.shape[1], frequency_grid(1e9)
    t_before, z_before = _best(lambda: port_impedance(Rf, Lf, P, freqs), repeat)
    t_here, z_here = _best(lambda: _scheduled_impedance(Rf, Lf, P, freqs, ""), repeat)
    cells = [f"{loops} loops: {len(net.branches)} branches, {P} ports, {form.C.shape[1]} meshes",
             f"{t_before:.3f}", f"{t_here:.3f}"]
    same = []
    for workers in (1, 2):
        with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                          dashboard_address=None) as cluster, Client(cluster) as client:
            t_w, z_w = _best(lambda c=client: _scheduled_impedance(Rf, Lf, P, freqs, c), repeat)
        cells.append(f"{t_w:.3f}")
        same.append(z_w.tobytes() == z_here.tobytes())
    # per frequency, the largest difference over the largest entry of that point's matrix
    scale = np.max(np.abs(z_before), axis=(1, 2), keepdims=True)
    dev = float(np.max(np.abs(z_here - z_before) / scale))
    cells += ["yes" if all(same) else "NO", f"{dev:.0e}"]
    return "| " + " | ".join(cells) + " |"


def end_to_end(loops: int) -> list[str]:
    import subprocess

    from distributed import LocalCluster

    routes, netlist = board(loops, ladder=True)
    exe = [sys.executable, "-m", "parasite"]
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        cir, rt = Path(tmp) / "b.cir", Path(tmp) / "b.routes.toml"
        cir.write_text(netlist + ".end\n")
        rt.write_text(routes)

        def run(tag: str, *extra: str) -> tuple[float, bytes]:
            out, rep = Path(tmp) / f"{tag}.cir", Path(tmp) / f"{tag}.json"
            t0 = time.perf_counter()
            subprocess.run([*exe, "augment", str(cir), str(rt), "-o", str(out), "--report",
                            str(rep), "-q", *extra], check=True)
            return time.perf_counter() - t0, out.read_bytes() + rep.read_bytes()

        t_here, ref = run("here")
        rows.append(f"| in process | {t_here:.2f} | yes |")
        with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                          dashboard_address=None) as cluster:
            t_there, got = run("there", "--scheduler", cluster.scheduler_address)
        rows.append(f"| --scheduler, 2 local workers | {t_there:.2f} | "
                    f"{'yes' if got == ref else 'NO'} |")
    return rows


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("loops", nargs="*", type=int, default=[6, 20, 40])
    ap.add_argument("--repeat", type=int, default=3, help="best of K runs")
    ap.add_argument("--end-to-end", type=int, default=None, metavar="LOOPS")
    args = ap.parse_args()
    print("| board | before: a complex solve per point (s) | modal, in process (s) | "
          "modal, 1 Dask worker (s) | modal, 2 Dask workers (s) | same bytes everywhere | "
          "largest difference to before, relative to the largest entry |")
    print("|---|---|---|---|---|---|---|")
    for n in args.loops:
        print(case(n, args.repeat), flush=True)
    if args.end_to_end:
        print(f"\n`parasite augment` of the {args.end_to_end}-loop board\n")
        print("| where | wall (s) | same netlist and report bytes |")
        print("|---|---|---|")
        for row in end_to_end(args.end_to_end):
            print(row, flush=True)


if __name__ == "__main__":
    main()
