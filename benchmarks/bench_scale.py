"""Benchmark of the scale foundations: the fast inductance operator against the dense
matrix (build time, matrix-vector product, memory of what is stored, accuracy), and a
10-point frequency sweep of a meshed-pour port in process, on a local Dask cluster of
1 worker and of 2 workers: the dense matrix, the operator at its defaults (multipole
far field) and at the board path's settings (far field on the layer grids). The
operator's table also has the layer grids at the operator's default near radii.

Run: ``.venv/bin/python benchmarks/bench_scale.py [N ...] [--sweep-cell MM]``. Boards are
the invented ones of ``benchmarks/bench_extract.py``; the pour scene is the invented
trace-over-pour of the tests.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from bench_extract import generated_board  # noqa: E402


def operator_case(n: int) -> str:
    from parasite.extract.operator import DenseInductance, FastInductance

    arrays = generated_board(n, plane=True)
    t0 = time.perf_counter()
    dense = DenseInductance.from_arrays(arrays)
    t_dense = time.perf_counter() - t0
    t0 = time.perf_counter()
    fast = FastInductance(arrays)
    t_fast = time.perf_counter() - t0
    x = np.random.default_rng(0).standard_normal(n)
    t0 = time.perf_counter()
    yd = dense.matvec(x)
    t_mvd = time.perf_counter() - t0
    t0 = time.perf_counter()
    yf = fast.matvec(x)
    t_mvf = time.perf_counter() - t0
    err = np.linalg.norm(yf - yd) / np.linalg.norm(yd)
    stored = fast.near.data.nbytes + fast.near.indices.nbytes + fast._corr.data.nbytes
    t0 = time.perf_counter()
    grid = FastInductance(arrays, far_field="grid")
    t_grid = time.perf_counter() - t0
    t0 = time.perf_counter()
    yg = grid.matvec(x)
    t_mvg = time.perf_counter() - t0
    err_g = np.linalg.norm(yg - yd) / np.linalg.norm(yd)
    return (f"| {n:,} | {t_dense:.2f} | {t_fast:.2f} | {t_mvd * 1e3:.1f} | {t_mvf * 1e3:.0f} | "
            f"{dense.L.nbytes / 2**20:.0f} | {stored / 2**20:.0f} | "
            f"{fast.pairs_near / n**2:.3f} | {err:.1e} | {t_grid:.2f} | {t_mvg * 1e3:.1f} | "
            f"{err_g:.1e} |")


def sweep_case(cell: float) -> list[str]:
    from distributed import Client, LocalCluster
    from shapely.geometry import box

    sys.path.insert(0, str(ROOT))
    from geometry.model import Copper
    from parasite.extract import inductance_matrix, resistances
    from parasite.extract.sweep import port_sweep
    from tests.extract.pour_cases import trace_over_plane

    sc = trace_over_plane(20e-3, 1e-3, box(-8e-3, -10e-3, 28e-3, 10e-3), cell)
    a = sc.arrays
    L = inductance_matrix(a)
    R = resistances(a, Copper())
    freqs = list(np.geomspace(1e5, 1e8, 10))
    from parasite.extract.operator import (
        BOARD_EPS,
        BOARD_FAR_FIELD,
        BOARD_NEAR_SCALE,
        BOARD_SECTION_RATIO,
        FastInductance,
    )

    board = FastInductance(a, section_ratio=BOARD_SECTION_RATIO, near_scale=BOARD_NEAR_SCALE,
                           eps=BOARD_EPS, far_field=BOARD_FAR_FIELD)
    rows = []
    for how, held in (("dense matrix", L), ("operator", FastInductance(a)),
                      ("operator, board settings (layer grids)", board)):
        args = (a.node_from, a.node_to, sc.n_nodes, held, R, freqs, sc.plus, sc.minus)
        t0 = time.perf_counter()
        ref = port_sweep(*args)
        rows.append(f"| {how} | in process | {time.perf_counter() - t0:.1f} | yes |")
        for workers in (1, 2):
            with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                              dashboard_address=None) as cluster, Client(cluster) as client:
                t0 = time.perf_counter()
                got = port_sweep(*args, scheduler=client)
                wall = time.perf_counter() - t0
            same = all(x.currents.tobytes() == y.currents.tobytes()
                       for x, y in zip(ref, got, strict=True))
            rows.append(f"| {how} | {workers} Dask worker{'s' if workers > 1 else ''} | "
                        f"{wall:.1f} | {'yes' if same else 'NO'} |")
    return [f"{len(a)} segments, {L.shape[0]}x{L.shape[0]} matrix, 10 points"] + rows


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("sizes", nargs="*", type=int, default=[2000, 5000])
    ap.add_argument("--sweep-cell", type=float, default=1.0, help="pour cell, mm")
    ap.add_argument("--no-sweep", action="store_true")
    args = ap.parse_args()
    print("| N | dense build (s) | fast build (s) | dense matvec (ms) | fast matvec (ms) "
          "| dense (MiB) | fast stored (MiB) | near share | matvec rel. error "
          "| grid build (s) | grid matvec (ms) | grid rel. error |")
    print("|---|---|---|---|---|---|---|---|---|---|---|---|")
    for n in args.sizes:
        print(operator_case(n), flush=True)
    if not args.no_sweep:
        lines = sweep_case(args.sweep_cell * 1e-3)
        print()
        print(lines[0])
        print("| L held as | where | wall (s) | same bytes as in process |")
        print("|---|---|---|---|")
        for line in lines[1:]:
            print(line)


if __name__ == "__main__":
    main()
