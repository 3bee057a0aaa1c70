"""Benchmark: building the inductance operator alone (``FastInductance``) on the
meshed power stage of ``bench_board_scale.py`` (invented board), the near field
block by block of rows (now) against the construction it replaced (kept here only,
for this comparison: global int64 pair lists from balls of twice each segment's
near radius, a superset of the pairs within the sum of the radii, then COO -> CSR
twice).

Each size and construction runs in a fresh process (``--child``): the board's copper
graph is loaded and the compiled kernels warmed up on a small board first; then the
operator is built once. Reported: build seconds, the near pairs stored (``i < j``),
the peak resident memory of the process (``resource.getrusage``, Linux: KiB) and its
rise during the build per stored pair, and the bytes the operator holds afterwards
in its near field and correction. With ``--accuracy`` the smallest size also gets
the relative error of one product against the dense matrix for both constructions
(the floor: ``parasite.extract.inductance_matrix``).

Run: ``.venv/bin/python benchmarks/bench_near_build.py [--sizes 5000 12000 22000]``.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))


def _old_near_pairs(xy: np.ndarray, radius: np.ndarray,
                    chunk: int = 2048) -> tuple[np.ndarray, np.ndarray]:
    """The replaced search: pairs i < j within twice either radius (a superset)."""
    from scipy.spatial import cKDTree

    n = len(xy)
    tree = cKDTree(xy)
    keys = []
    for r0 in range(0, n, chunk):
        r1 = min(n, r0 + chunk)
        hits = tree.query_ball_point(xy[r0:r1], 2.0 * radius[r0:r1], return_sorted=False)
        counts = np.fromiter((len(h) for h in hits), dtype=np.int64, count=len(hits))
        jj = np.fromiter((j for h in hits for j in h), dtype=np.int64, count=int(counts.sum()))
        ii = np.repeat(np.arange(r0, r1, dtype=np.int64), counts)
        a, b = np.minimum(ii, jj), np.maximum(ii, jj)
        keep = a < b
        keys.append(a[keep] * n + b[keep])
    key = np.unique(np.concatenate(keys)) if keys else np.zeros(0, np.int64)
    return key // n, key % n


def old_operator(arrays, section_ratio: float, near_scale: float):  # noqa: ANN001, ANN201
    """A FastInductance whose near field and correction are built the replaced way."""
    from parasite.extract import kernels
    from parasite.extract.images import IMAGE_SIGN
    from parasite.extract.near_field import entries
    from parasite.extract.operator import FastInductance

    op = FastInductance.__new__(FastInductance)
    # the replaced construction, statement for statement
    from parasite.extract.matrix import tables

    c, img, mz, diag = tables(arrays)
    n = len(arrays)
    op.shape = (n, n)
    op.eps = 1e-7
    op.section_ratio = section_ratio
    op._c, op._img, op._mz, op._diag = c, img, mz, diag
    radius = near_scale * np.maximum(3.5 * c.length[:n], c.length[:n] + section_ratio * c.size[:n])
    op.near_radius, op.near_scale = radius, near_scale
    ii, jj = _old_near_pairs(c.mid[:n, :2], radius)
    exact = np.empty(ii.size)
    for p0 in range(0, ii.size, 200_000):
        p1 = min(ii.size, p0 + 200_000)
        exact[p0:p1] = entries(c, img, mz, ii[p0:p1], jj[p0:p1])
    diag_idx = np.arange(n, dtype=np.int64)
    f_off = kernels.two_point_entries(ii, jj, img, IMAGE_SIGN, c.mid, c.d)
    f_diag = kernels.two_point_entries(diag_idx, diag_idx, img, IMAGE_SIGN, c.mid, c.d)
    rows = np.concatenate([ii, jj, diag_idx])
    cols = np.concatenate([jj, ii, diag_idx])
    op.near = sp.csr_matrix((np.concatenate([exact, exact, diag]), (rows, cols)), shape=(n, n))
    op._corr = sp.csr_matrix((np.concatenate([exact - f_off, exact - f_off, diag - f_diag]),
                              (rows, cols)), shape=(n, n))
    has = img >= 0
    op._src = np.concatenate([np.flatnonzero(np.ones(n, bool)), img[has]])
    op._n_img, op._has = int(has.sum()), has
    m, d = c.mid[op._src], c.d[op._src]
    op._points = np.concatenate([m - 0.5 / np.sqrt(3.0) * d, m + 0.5 / np.sqrt(3.0) * d]).T.copy()
    op._d = d
    return op


def _build(arrays, how: str):  # noqa: ANN001, ANN202
    from parasite.extract.operator import (
        BOARD_NEAR_SCALE,
        BOARD_SECTION_RATIO,
        BOARD_WIDTH_POINTS,
        FastInductance,
    )

    if how == "old":
        return old_operator(arrays, BOARD_SECTION_RATIO, BOARD_NEAR_SCALE)
    return FastInductance(arrays, section_ratio=BOARD_SECTION_RATIO, near_scale=BOARD_NEAR_SCALE,
                          width_points=BOARD_WIDTH_POINTS)


def _held(op) -> int:  # noqa: ANN001
    """Bytes of the near field and the correction (shared arrays counted once)."""
    arrays = {a.__array_interface__["data"][0]: a.nbytes
              for m in (op.near, op._corr) for a in (m.data, m.indices, m.indptr)}
    return int(sum(arrays.values()))


def child(how: str, cir: str, routes: str, accuracy: bool) -> dict:
    """One build in this (fresh) process; the figures as a dict."""
    from benchmarks.bench_extract import generated_board
    from parasite.pipeline import load_inputs

    arrays = load_inputs(cir, routes, "fast").graph.arrays
    _build(generated_board(300, seed=1, plane=True), how)  # compiled kernels loaded
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    t0 = time.perf_counter()
    op = _build(arrays, how)
    wall = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    out = {"how": how, "segments": len(arrays), "pairs": op.pairs_near // 2, "wall": wall,
           "peak": peak, "rise": peak - before, "held": _held(op)}
    if accuracy:
        from parasite.extract import inductance_matrix

        L = inductance_matrix(arrays)
        x = np.random.default_rng(0).standard_normal(len(arrays))
        y = L @ x
        out["product_error"] = float(np.linalg.norm(op.matvec(x) - y) / np.linalg.norm(y))
    return out


def _run_child(how: str, cir: str, routes: str, accuracy: bool) -> dict:
    proc = subprocess.run([sys.executable, __file__, "--child", how, cir, routes]
                          + (["--accuracy"] if accuracy else []),
                          capture_output=True, text=True, cwd=ROOT)
    if proc.returncode != 0:
        return {"how": how, "error": proc.stderr.strip()[-400:]}
    return json.loads(proc.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[5000, 12000, 22000])
    ap.add_argument("--accuracy", action="store_true",
                    help="product error against the dense matrix at the smallest size")
    ap.add_argument("--only", choices=["old", "new"], help="one construction only")
    ap.add_argument("--child", nargs=3, metavar=("HOW", "CIR", "ROUTES"), help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        print(json.dumps(child(*args.child, args.accuracy)))
        return
    from benchmarks.bench_board_scale import cell_for, write_board

    print(f"{'N':>7} {'how':>4} {'pairs':>10} {'build s':>8} {'peak MiB':>9} "
          f"{'rise B/pair':>11} {'held B/pair':>11} {'product err':>11}")
    with tempfile.TemporaryDirectory() as tmp:
        for k, n in enumerate(sorted(args.sizes)):
            folder = Path(tmp) / str(n)
            folder.mkdir()
            cir, routes = write_board(folder, cell_for(n))
            for how in ([args.only] if args.only else ["old", "new"]):
                r = _run_child(how, cir, routes, args.accuracy and k == 0)
                if "error" in r:
                    print(f"{n:>7} {how:>4} error: {r['error']}")
                    continue
                err = f"{r['product_error']:.2e}" if "product_error" in r else "-"
                print(f"{r['segments']:>7} {how:>4} {r['pairs']:>10,} {r['wall']:8.1f} "
                      f"{r['peak'] / 2**20:9.0f} {r['rise'] / r['pairs']:11.0f} "
                      f"{r['held'] / r['pairs']:11.1f} {err:>11}", flush=True)
    print(f"(cores: {os.cpu_count()}; fresh process per row; invented board)")


if __name__ == "__main__":
    main()
