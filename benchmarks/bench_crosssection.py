"""Benchmark of the cross-section solves (frequency-dependent R and L per unit length):
cost per cross-section, and what a cache keyed by cross-section and neighbourhood saves.

A segment's cross-section problem is set by its shape (bar width and thickness, or
round radius) and its neighbourhood; here the neighbourhood is the height of the
nearest return plane's face (``mirror_z``), the one neighbour every segment has. The
key rounds each of these to ``--grid`` (default 1 um). For each board: the number of
segments, the number of distinct keys, the measured mean time of one solve (over the
distinct keys, or a sample of them), and the cost without the cache projected as
segments x mean time (not run: it would take that long), against the cost with it.

Boards: the demo (fixtures/demo, an invented buck converter) and a generated board of
5,000 segments (benchmarks/bench_extract.py's invented random board).
Run: ``.venv/bin/python benchmarks/bench_crosssection.py [--f-max 1e9] [--sample 12]``.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from parasite.extract.crosssection import Circle, Meshing, Rect, loop_impedance, solve_section  # noqa: E402

PLANE_THICKNESS = 35e-6  # m, the return plane strip of every bar's section
FREQ = np.geomspace(1e3, 1e9, 25)


def section_keys(arrays, grid: float) -> list[tuple]:
    """One key per segment: ('round', radius) or ('bar', width, thickness, height above
    the plane face or -1 for none), lengths rounded to ``grid`` (m)."""
    keys = []
    for i in range(len(arrays)):
        if arrays.round[i]:
            keys.append(("round", round(float(arrays.radius[i]) / grid)))
            continue
        zc = 0.5 * (arrays.start[i, 2] + arrays.end[i, 2])
        mz = arrays.mirror_z[i]
        h = -1 if np.isnan(mz) else round(float(abs(zc - mz) - arrays.thickness[i] / 2) / grid)
        keys.append(("bar", round(float(arrays.width[i]) / grid),
                     round(float(arrays.thickness[i]) / grid), h))
    return keys


def solve_key(key: tuple, grid: float, meshing: Meshing) -> tuple[np.ndarray, np.ndarray]:
    """R(f), L(f) per unit length of one key's section (the loop over the plane, or the
    lone conductor)."""
    if key[0] == "round":
        res = solve_section([Circle(0.0, 0.0, key[1] * grid)], FREQ, meshing)
        return res.resistance[:, 0, 0], res.inductance[:, 0, 0]
    w, t, h = key[1] * grid, key[2] * grid, key[3] * grid
    bar = Rect(0.0, 0.0, w, t)
    if key[3] < 0:
        res = solve_section([bar], FREQ, meshing)
        return res.resistance[:, 0, 0], res.inductance[:, 0, 0]
    plane = Rect(0.0, -t / 2 - h - PLANE_THICKNESS / 2, w + 6 * h, PLANE_THICKNESS)
    cell = Meshing(meshing.f_max, meshing.first, meshing.growth, max(w / 2, h / 2), meshing.sectors)
    return loop_impedance(solve_section([bar, plane], FREQ, cell), [1.0, -1.0])


def demo_arrays():
    from parasite.pipeline import load_inputs
    demo = ROOT / "fixtures" / "demo"
    return load_inputs(str(demo / "buck.cir"), str(demo / "buck.routes.toml")).graph.arrays


def generated_arrays(n: int):
    sys.path.insert(0, str(ROOT / "benchmarks"))
    from bench_extract import generated_board
    return generated_board(n)


def measure(name: str, arrays, grid: float, meshing: Meshing, sample: int) -> dict:
    keys = section_keys(arrays, grid)
    distinct = sorted(set(keys))
    rng = np.random.default_rng(0)
    chosen = distinct if len(distinct) <= sample else [distinct[i] for i in
                                                       rng.choice(len(distinct), sample, replace=False)]
    times = []
    for key in chosen:
        t0 = time.perf_counter()
        solve_key(key, grid, meshing)
        times.append(time.perf_counter() - t0)
    mean = float(np.mean(times))
    return {"board": name, "segments": len(keys), "distinct": len(distinct), "timed": len(chosen),
            "mean_s": mean, "no_cache_s": mean * len(keys), "cache_s": mean * len(distinct)}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--f-max", type=float, default=1e9)
    ap.add_argument("--grid", type=float, default=1e-6)
    ap.add_argument("--sample", type=int, default=12)
    ap.add_argument("--segments", type=int, default=5000)
    args = ap.parse_args()
    meshing = Meshing(f_max=args.f_max)
    print(f"f_max {args.f_max:g} Hz, {FREQ.size} frequencies per solve, key grid {args.grid:g} m")
    print("| board | segments | distinct sections | solves timed | mean solve (s) | "
          "no cache, projected (s) | with cache, projected (s) | saving |")
    print("|---|---|---|---|---|---|---|---|", flush=True)
    for name, arrays in (("demo", demo_arrays),
                         (f"generated {args.segments}", lambda: generated_arrays(args.segments))):
        r = measure(name, arrays(), args.grid, meshing, args.sample)
        print(f"| {r['board']} | {r['segments']} | {r['distinct']} | {r['timed']} | {r['mean_s']:.3f} | "
              f"{r['no_cache_s']:.0f} | {r['cache_s']:.1f} | {r['segments'] / r['distinct']:.0f}x |",
              flush=True)


if __name__ == "__main__":
    main()
