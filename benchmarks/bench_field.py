"""Benchmark of the field physics: a 100 x 100 near-field map and the loop-pair
mutual matrix, for the demo board and a generated board of 5,000 segments,
against a floor.

* Map floor: the compiled kernel evaluating the bare filament closed form once
  per (point, segment) pair (centre lines, no section filaments, no images):
  the least any Biot-Savart map of these segments can cost with this kernel.
  The full map adds the section filaments (Gauss-Legendre orders chosen per
  block of points) and the images in the return plane.
* Pair-matrix floor: one dense real product ``L @ [Re C^T, Im C^T]`` (every
  entry of L once per loop), the least any evaluation of all ``i_a^H L i_b``
  needs. The loops here are random halves of the copper, so every pair shares
  about a quarter of it (far more than real loops): the shared-copper split
  then costs one more product per pair, the worst case.

Every segment carries a random complex current (the worst case: segments
without current are skipped), and the loops are random halves of the copper;
the timings do not depend on the values. The boards are invented (the demo
scenario and random polylines, benchmarks/bench_extract.py), not real designs.

Run: ``.venv/bin/python benchmarks/bench_field.py [N ...] [--markdown]``.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_extract import generated_board  # noqa: E402

N_LOOPS = 8
REPEAT = 3


def _best(fn, repeat: int = REPEAT) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def demo_arrays():
    from parasite.extract import inductance_matrix
    from parasite.pipeline import load_inputs

    inputs = load_inputs(str(ROOT / "fixtures/demo/buck.cir"), str(ROOT / "fixtures/demo/buck.routes.toml"))
    arrays = inputs.graph.arrays
    return arrays, inductance_matrix(arrays)


def run(name: str, arrays, L) -> dict[str, object]:
    from parasite.field import coupling_matrix, field_map, height_plane, kernel_jit
    from parasite.field.nearmap import copper_extent

    rng = np.random.default_rng(3)
    n = len(arrays)
    cur = rng.normal(size=n) + 1j * rng.normal(size=n)
    z = height_plane(arrays, 1e-3)
    t_map = _best(lambda: field_map(arrays, cur, z, nx=100, ny=100))
    xmin, xmax, ymin, ymax = copper_extent(arrays)
    X, Y = np.meshgrid(np.linspace(xmin, xmax, 100), np.linspace(ymin, ymax, 100))
    pts = np.column_stack([X.ravel(), Y.ravel(), np.full(X.size, z)])
    zs = 0.5 * (arrays.start[:, 2] + arrays.end[:, 2])
    nan = np.full(n, np.nan)
    t_floor = _best(lambda: kernel_jit.field_sum(pts, arrays.start, arrays.end, cur, nan, zs))
    C = rng.normal(size=(N_LOOPS, n)) + 1j * rng.normal(size=(N_LOOPS, n))
    C[rng.random((N_LOOPS, n)) < 0.5] = 0
    t_pairs = _best(lambda: coupling_matrix(L, C))
    Ct = np.hstack([C.real.T, C.imag.T])
    t_pfloor = _best(lambda: L @ Ct)
    return {"board": name, "segments": n, "map_s": t_map, "map_floor_s": t_floor,
            "map_ratio": t_map / t_floor, "pairs_s": t_pairs, "pairs_floor_s": t_pfloor,
            "pairs_ratio": t_pairs / t_pfloor}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("sizes", nargs="*", type=int, default=[5000])
    ap.add_argument("--markdown", action="store_true")
    args = ap.parse_args()
    from parasite.extract import inductance_matrix
    from parasite.field import field_map, kernel_jit

    if not kernel_jit.available():
        sys.exit("numba is not installed: the map would use the numpy blocks")
    tiny = generated_board(20)
    field_map(tiny, np.ones(len(tiny)), 5e-3, nx=4, ny=4)  # compile once, outside the timings
    rows = [run("demo", *demo_arrays())]
    for n in args.sizes:
        arrays = generated_board(n)
        rows.append(run(f"generated {n}", arrays, inductance_matrix(arrays)))
    if args.markdown:
        print("| board | segments | 100x100 map | floor | ratio | "
              "loop-pair matrix (8 loops) | floor | ratio |")
        print("|---|---|---|---|---|---|---|---|")
        for r in rows:
            print(f"| {r['board']} | {r['segments']} | {r['map_s']:.3f} s | {r['map_floor_s']:.3f} s | "
                  f"{r['map_ratio']:.1f} | {r['pairs_s'] * 1e3:.1f} ms | {r['pairs_floor_s'] * 1e3:.1f} ms | "
                  f"{r['pairs_ratio']:.1f} |")
    else:
        for r in rows:
            print(r)


if __name__ == "__main__":
    main()
