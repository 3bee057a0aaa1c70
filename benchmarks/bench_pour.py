"""Benchmark of a meshed pour: a square pour (50 x 50 mm at 1 mm cells by default)
with a trace 1 mm above it, as in the pour physics tests: mesh, inductance
matrix, resistances and the port solve at 100 MHz; cells, wall time of each
step, peak memory, and the extraction against the floor of
``benchmarks/bench_extract.py`` (one parallel-filament closed form per pair).

Where the cost goes is printed too: the share of pairs that the extraction
cannot hand to its cheap far-field quadrature (midpoint distance below 3.5
times the longer cell: :data:`parasite.extract.matrix.FAR_RULES`), and how
many distinct cell shapes the mesh has (a uniform interior repeats a few
shapes at many offsets).

What would remove the cost (figures in docs/pours.md): the pair terms repeat
at the same offsets on a regular grid, so tabulating them by (shape pair,
offset), or compressing far blocks to low rank, removes most of the O(N^2)
pair work and memory; an iterative Krylov solve with a near-field
preconditioner and fast far-field products removes the O(c^3) dense LU of the
cycle matrix.

Run: ``.venv/bin/python benchmarks/bench_pour.py [--side MM] [--cell MM]``.
The geometry is invented test data.
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
from pathlib import Path

import numpy as np
from shapely.geometry import box

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_extract import floor_time  # noqa: E402

from geometry.mesh import mesh_polygon, stack_arrays  # noqa: E402
from geometry.model import Copper, SegmentArrays  # noqa: E402
from parasite.extract import inductance_matrix, resistances  # noqa: E402
from parasite.extract.pairs import FAR_RULES  # noqa: E402
from parasite.extract.pour_solve import solve_port  # noqa: E402


def near_share(arrays: SegmentArrays, block: int = 256) -> float:
    """Share of pairs (i < j, not perpendicular) closer than the first far rule."""
    mid = 0.5 * (arrays.start + arrays.end)
    u = arrays.end - arrays.start
    length = np.linalg.norm(u, axis=1)
    u = u / length[:, None]
    n = len(arrays)
    near = live = 0
    for r0 in range(0, n, block):
        rows = np.arange(r0, min(n, r0 + block))
        d = np.linalg.norm(mid[rows, None, :] - mid[None, :, :], axis=2)
        par = np.abs(u[rows] @ u.T) > 1e-12
        upper = np.arange(n)[None, :] > rows[:, None]
        lmax = np.maximum(length[rows, None], length[None, :])
        live += int(np.sum(par & upper))
        near += int(np.sum(par & upper & (d < FAR_RULES[0][0] * lmax)))
    return near / max(live, 1)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--side", type=float, default=50.0, help="pour side, mm")
    ap.add_argument("--cell", type=float, default=1.0, help="largest cell, mm")
    args = ap.parse_args()
    side, cell = args.side * 1e-3, args.cell * 1e-3
    zp, t, h = 17.5e-6, 35e-6, 1e-3
    x0, x1 = 0.2 * side, 0.8 * side
    yc = 0.5 * side

    t0 = time.perf_counter()
    mesh = mesh_polygon(box(0, 0, side, side), z=zp, thickness=t, cell=cell,
                        refine=[(x0, yc), (x1, yc)])
    t_mesh = time.perf_counter() - t0
    m = mesh.n_nodes
    p0, p1 = mesh.nearest_node((x0, yc)), mesh.nearest_node((x1, yc))
    zt = zp + h
    r = 0.15e-3
    trace = SegmentArrays(
        start=np.array([[x0, yc, zt], [x1, yc, zt], [x0, yc, zp]]),
        end=np.array([[x1, yc, zt], [x1, yc, zp], [x0, yc, zt]]),
        width=np.array([0.2e-3, 2 * r, 2 * r]), thickness=np.array([t, 2 * r, 2 * r]),
        round=np.array([False, True, True]), radius=np.array([0.0, r, r]),
        inner_radius=np.zeros(3), net_index=np.zeros(3, dtype=np.int64),
        node_from=np.array([m, m + 1, p0]), node_to=np.array([m + 1, p1, m + 2]),
        mirror_z=np.full(3, np.nan))
    arrays = stack_arrays([mesh.arrays(), trace])
    n = len(arrays)

    t0 = time.perf_counter()
    L = inductance_matrix(arrays)
    t_l = time.perf_counter() - t0
    t0 = time.perf_counter()
    R = resistances(arrays, Copper())
    t_r = time.perf_counter() - t0
    t0 = time.perf_counter()
    sol = solve_port(arrays.node_from, arrays.node_to, m + 3, L, R, 100e6, m, m + 2)
    t_s = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    l_bytes = L.nbytes
    del L
    floor = floor_time(arrays)
    share = near_share(arrays)
    shapes = np.unique(np.round(np.stack([arrays.length, arrays.width], 1) / 1e-9), axis=0).shape[0]
    print(f"pour {args.side:g} x {args.side:g} mm, cell {args.cell:g} mm: {m} nodes, "
          f"{mesh.n_cells} cells (+3 trace/via segments), {sol.frequency / 1e6:g} MHz loop "
          f"{sol.inductance * 1e9:.3f} nH")
    print(f"mesh {t_mesh:.2f} s | inductance matrix {t_l:.1f} s (floor {floor:.2f} s, "
          f"ratio {t_l / floor:.1f}) | resistances {t_r:.3f} s | port solve {t_s:.1f} s")
    print(f"peak memory {peak / 2**20:.0f} MiB (the float64 matrix alone {l_bytes / 2**20:.0f} MiB)")
    print(f"{n} segments, {n * (n - 1) // 2} pairs; {100 * share:.1f}% of the parallel pairs are "
          f"near (exact bar formulas); {shapes} distinct cell shapes")


if __name__ == "__main__":
    main()
