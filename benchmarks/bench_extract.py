"""Benchmark of the extraction: wall time and peak memory of the full inductance
matrix for generated boards of N segments (mixed angles), against a floor.

The floor is numpy evaluating the parallel-filament closed form
(:func:`parasite.extract.filaments.parallel_filament_integral`) once for each of the
N (N + 1) / 2 pairs, in blocks: the least any extraction of N segments can cost.

Run: ``.venv/bin/python benchmarks/bench_extract.py [N ...] [--no-plane] [--markdown]``.
Each N runs in a fresh subprocess so that its peak memory (ru_maxrss) is its own.
The boards are invented test data (random polylines), not a real design.
"""

from __future__ import annotations

import argparse
import json
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from geometry.model import SegmentArrays  # noqa: E402


def generated_board(n: int, *, seed: int = 1, plane: bool = True) -> SegmentArrays:
    """An invented board with ``n`` segments: random polylines on two signal layers
    (0, 45, 90 degree and arbitrary turns, 2 to 12 mm pieces, 0.15 to 2 mm wide,
    35 um copper) over a square board sized for about 1 segment per 10 mm^2, with no
    two traces of one layer closer than 0.1 mm edge to edge (as a design rule check
    would demand), and about 8% via segments (0.3 mm barrels, 25 um wall, at least
    1 mm apart) between the layers; with ``plane``, a return plane face at z = 0.
    """
    from parasite.extract.inclined import segment_distance

    rng = np.random.default_rng(seed)
    n_via = max(1, n // 12)
    n_tr = n - n_via
    side = np.sqrt(10e-6 * n)  # m
    layers = np.array([1.565e-3, 0.2e-3])  # bottom faces of two signal layers (m)
    t = 35e-6
    cap = n_tr + 16
    s_arr, e_arr = np.zeros((cap, 3)), np.zeros((cap, 3))
    w_arr = np.zeros(cap)
    k = 0
    while k < n_tr:
        pts = rng.uniform(0.05 * side, 0.95 * side, 2)
        ang = rng.choice([0.0, np.pi / 2, np.pi / 4, -np.pi / 4, rng.uniform(0, np.pi)])
        w = rng.choice([0.15e-3, 0.25e-3, 0.5e-3, 1e-3, 2e-3])
        z = layers[rng.integers(2)] + t / 2
        first = k
        for _ in range(int(rng.integers(3, 12))):
            if k >= n_tr:
                break
            step = rng.uniform(2e-3, 12e-3)
            nxt = pts + step * np.array([np.cos(ang), np.sin(ang)])
            p, q = np.array([pts[0], pts[1], z]), np.array([nxt[0], nxt[1], z])
            others = np.nonzero(s_arr[:k, 2] == z)[0]
            others = others[others != k - 1] if k > first else others
            if others.size:
                dist = segment_distance(np.repeat(p[None], others.size, 0),
                                        np.repeat(q[None], others.size, 0),
                                        s_arr[others], e_arr[others])
                if np.any(dist < 0.5 * (w + w_arr[others]) + 0.1e-3):
                    break
            if np.any(nxt < 0) or np.any(nxt > side):
                break
            s_arr[k], e_arr[k], w_arr[k] = p, q, w
            k += 1
            pts = nxt
            ang += rng.choice([0.0, np.pi / 4, -np.pi / 4, np.pi / 2, -np.pi / 2,
                               rng.uniform(-1.0, 1.0)])
    xy = np.zeros((0, 2))
    while xy.shape[0] < n_via:
        cand = rng.uniform(0.05 * side, 0.95 * side, 2)
        if xy.shape[0] == 0 or np.min(np.hypot(*(xy - cand).T)) >= 1e-3:
            xy = np.vstack([xy, cand])
    z0, z1 = layers[1] + t / 2, layers[0] + t / 2
    start = np.concatenate([s_arr[:n_tr], np.column_stack([xy, np.full(n_via, z0)])])
    end = np.concatenate([e_arr[:n_tr], np.column_stack([xy, np.full(n_via, z1)])])
    rnd = np.concatenate([np.zeros(n_tr, bool), np.ones(n_via, bool)])
    width = np.concatenate([w_arr[:n_tr], np.full(n_via, 0.3e-3)])
    thickness = np.where(rnd, 0.3e-3, t)
    radius = np.where(rnd, 0.15e-3, 0.0)
    inner = np.where(rnd, 0.125e-3, 0.0)
    mirror = np.full(n, 0.0 if plane else np.nan)
    return SegmentArrays(start=start, end=end, width=width, thickness=thickness, round=rnd,
                         radius=radius, inner_radius=inner, net_index=np.zeros(n, int),
                         node_from=np.arange(n), node_to=np.arange(n) + n,
                         mirror_z=mirror)


def floor_time(arrays: SegmentArrays, block: int = 100_000) -> float:
    """Seconds for the parallel-filament closed form once per pair (i <= j), in blocks."""
    from parasite.extract.filaments import parallel_filament_integral

    n = len(arrays)
    x = arrays.start[:, 0]
    rho_src = arrays.start[:, 1] + 1e-4
    length = arrays.length
    t0 = time.perf_counter()
    acc = 0.0
    iu_row = 0
    while iu_row < n:
        rows = np.arange(iu_row, min(n, iu_row + max(1, block // max(1, n - iu_row))))
        cnt = n - rows
        i = np.repeat(rows, cnt)
        first = np.repeat(np.cumsum(cnt) - cnt, cnt)
        j = i + (np.arange(i.size) - first)
        val = parallel_filament_integral(np.zeros(i.size), length[i], x[j] - x[i],
                                         x[j] - x[i] + length[j],
                                         np.abs(rho_src[j] - rho_src[i]) + 1e-4)
        acc += float(val[0])
        iu_row = int(rows[-1]) + 1
    return time.perf_counter() - t0


def run_one(n: int, plane: bool) -> dict[str, float]:
    from parasite.extract import inductance_matrix

    arrays = generated_board(n, plane=plane)
    t0 = time.perf_counter()
    L = inductance_matrix(arrays)
    wall = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024  # bytes (Linux: KiB)
    ok = bool(np.all(np.isfinite(L)) and np.array_equal(L, L.T))
    matrix_bytes = L.nbytes
    del L
    floor = floor_time(arrays)
    return {"n": n, "plane": plane, "wall_s": wall, "peak_bytes": peak,
            "matrix_bytes": matrix_bytes, "floor_s": floor, "ratio": wall / floor, "ok": ok}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("sizes", nargs="*", type=int, default=[1000, 5000, 20000])
    ap.add_argument("--no-plane", action="store_true")
    ap.add_argument("--one", action="store_true", help=argparse.SUPPRESS)
    ap.add_argument("--markdown", action="store_true")
    args = ap.parse_args()
    if args.one:
        print(json.dumps(run_one(args.sizes[0], not args.no_plane)))
        return
    rows = []
    for n in args.sizes:
        cmd = [sys.executable, __file__, str(n), "--one"] + (["--no-plane"] if args.no_plane else [])
        out = subprocess.run(cmd, capture_output=True, text=True, check=True).stdout
        rows.append(json.loads(out.strip().splitlines()[-1]))
        r = rows[-1]
        print(f"N={r['n']:>6} plane={r['plane']!s:5} wall {r['wall_s']:8.2f} s  "
              f"peak {r['peak_bytes'] / 2**30:6.3f} GiB (matrix {r['matrix_bytes'] / 2**30:.3f} GiB)"
              f"  floor {r['floor_s']:7.2f} s  ratio {r['ratio']:5.2f}", file=sys.stderr)
    if args.markdown:
        print("| N | return plane | wall time (s) | peak memory (GiB) | of which the matrix (GiB) "
              "| floor (s) | time / floor |")
        print("|---|---|---|---|---|---|---|")
        for r in rows:
            print(f"| {r['n']:,} | {'yes' if r['plane'] else 'no'} | {r['wall_s']:.2f} | "
                  f"{r['peak_bytes'] / 2**30:.3f} | {r['matrix_bytes'] / 2**30:.3f} | "
                  f"{r['floor_s']:.2f} | {r['ratio']:.2f} |")


if __name__ == "__main__":
    main()
