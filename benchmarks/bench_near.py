"""Benchmark of the near pairs alone: the compiled batch
(:func:`parasite.extract.matrix.near_values`) against the numpy reference
(:func:`parasite.extract.matrix.near_values_numpy`) on the same listed pairs, in one
process, alternating (best of three each), so that the ratio holds on a shared machine.

Boards: the generated boards of ``bench_extract.py`` (with and without the return plane)
and the meshed pour of ``bench_pour.py`` (50 x 50 mm at 1 mm cells). Invented geometry.

Run: ``.venv/bin/python benchmarks/bench_near.py [N] [--pour-cell MM]``.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np
from shapely.geometry import box

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_extract import generated_board  # noqa: E402

from geometry.mesh import mesh_polygon  # noqa: E402
from geometry.model import SegmentArrays  # noqa: E402
from parasite.extract.matrix import listed_near, near_values, near_values_numpy, tables  # noqa: E402
from parasite.extract.pairs import _Conductors  # noqa: E402


def pour_arrays(side: float = 50e-3, cell: float = 1e-3) -> SegmentArrays:
    """The pour of bench_pour.py without its trace (m)."""
    x0, x1, yc = 0.2 * side, 0.8 * side, 0.5 * side
    mesh = mesh_polygon(box(0, 0, side, side), z=17.5e-6, thickness=35e-6, cell=cell,
                        refine=[(x0, yc), (x1, yc)])
    return mesh.arrays()


def listed(arrays: SegmentArrays) -> tuple[_Conductors, np.ndarray, np.ndarray]:
    """The conductor table and the near pairs the compiled loops list for a board."""
    c, img, mz, _diag = tables(arrays)
    _offsets, pa, pb = listed_near(c, img, mz, 0, len(arrays), len(arrays))
    return c, pa, pb


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("n", nargs="?", type=int, default=5000)
    ap.add_argument("--pour-cell", type=float, default=1.0, help="pour cell, mm")
    args = ap.parse_args()
    boards = [("generated board, return plane", generated_board(args.n)),
              ("generated board, no plane", generated_board(args.n, plane=False)),
              (f"pour 50 x 50 mm, {args.pour_cell:g} mm cells",
               pour_arrays(cell=args.pour_cell * 1e-3))]
    print("| board | segments | near pairs | numpy (s) | compiled (s) | numpy / compiled |")
    print("|---|---|---|---|---|---|")
    for name, arrays in boards:
        c, pa, pb = listed(arrays)
        near_values(c, pa[:10], pb[:10])  # loads the compiled code
        t_np, t_nb = [], []
        for _ in range(3):
            t0 = time.perf_counter()
            ref = near_values_numpy(c, pa, pb)
            t_np.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            got = near_values(c, pa, pb)
            t_nb.append(time.perf_counter() - t0)
        assert np.all(np.isfinite(got)) and got.shape == ref.shape
        print(f"| {name} | {len(arrays):,} | {pa.size:,} | {min(t_np):.2f} | {min(t_nb):.2f} | "
              f"{min(t_np) / min(t_nb):.1f} |")
    print("load average (1, 5, 15 min): " + " ".join(f"{v:.2f}" for v in os.getloadavg()))


if __name__ == "__main__":
    main()
