"""Benchmark of ``parasite batch``: the reports of several boards in one run, against
the floor (the same boards' reports computed one after the other in one warmed-up
process: ``parasite.batch.board_report``, the work itself) and against what a
makefile does without it (one ``parasite report --format json`` process per board).

What the batch adds to the floor: one interpreter start and imports, the first
call's compile-cache loads, and the check of every board's files before any work
(``load_inputs`` twice per board: once in the check, once in the board's report);
the separate runs pay the start and imports once per board. The batch's reports are
compared byte for byte with the separate runs'. With ``--cluster``: the batch also
on a local Dask cluster of 2 worker processes, one thread each (the cluster's start
not timed; the dense path there runs with one BLAS thread, so its bytes are compared
only on the fast path).

The boards are the generated ones of ``bench_threshold.py`` with ladder returns
(invented), ``LOOPS`` loops each, ``--boards`` of them. Peak resident memory of each
command is read from the kernel's accounting of the child process (``wait4``).

Run: ``.venv/bin/python benchmarks/bench_batch.py [--boards K] [--loops L]
[--inductance auto|fast] [--cluster]``.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_threshold import board  # noqa: E402

PARASITE = [sys.executable, "-m", "parasite"]


def _run(args: list[str]) -> tuple[float, float]:
    """Wall time (s) and peak resident memory (MiB) of one command."""
    t = time.perf_counter()
    proc = subprocess.Popen(args, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t
    proc.returncode = os.waitstatus_to_exitcode(status)
    err = proc.stderr.read().decode() if proc.stderr else ""
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(args)}: exit {proc.returncode}\n{err}")
    return wall, usage.ru_maxrss / 1024.0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--boards", type=int, default=6)
    ap.add_argument("--loops", type=int, default=3)
    ap.add_argument("--inductance", default="auto", choices=["auto", "dense", "fast"])
    ap.add_argument("--cluster", action="store_true")
    a = ap.parse_args()

    from parasite.batch import board_report
    from parasite.pipeline import load_inputs

    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        boards = []
        for k in range(a.boards):
            routes, netlist = board(a.loops + k % 2, ladder=True)  # two sizes, alternating
            cir, rt = d / f"b{k}.cir", d / f"b{k}.routes.toml"
            cir.write_text(netlist + ".end\n")
            rt.write_text(routes)
            boards.append((str(cir), str(rt)))
        pieces = [len(load_inputs(c, r).graph.segments) for c, r in boards]

        board_report((*boards[0], a.inductance))  # warm-up: numba's cache, imports
        t = time.perf_counter()
        for c, r in boards:
            load_inputs(c, r, a.inductance)
        check = time.perf_counter() - t
        t = time.perf_counter()
        floor_bytes = [board_report((c, r, a.inductance)) for c, r in boards]
        floor = time.perf_counter() - t

        sep_wall, sep_mem = 0.0, 0.0
        (d / "sep").mkdir()
        for k, (c, r) in enumerate(boards):
            w, m = _run([*PARASITE, "report", c, r, "--format", "json", "-q", "--inductance",
                         a.inductance, "-o", str(d / "sep" / f"b{k}.json")])
            sep_wall += w
            sep_mem = max(sep_mem, m)
        files = [x for pair in boards for x in pair]
        batch_wall, batch_mem = _run([*PARASITE, "batch", "-o", str(d / "batch"), *files, "-q",
                                      "--inductance", a.inductance])
        same = all((d / "batch" / f"b{k}.json").read_bytes()
                   == (d / "sep" / f"b{k}.json").read_bytes() for k in range(len(boards)))
        same_floor = all((d / "batch" / f"b{k}.json").read_bytes() == floor_bytes[k]
                         for k in range(len(boards)))

        print(f"{len(boards)} boards of {min(pieces)}-{max(pieces)} pieces, --inductance "
              f"{a.inductance}, {os.cpu_count()} cores")
        print("| run | wall s | / floor | peak MiB |")
        print("|---|---:|---:|---:|")
        print(f"| floor: board_report of each, one warm process | {floor:.2f} | 1.00 | |")
        print(f"| the batch's check of every board's files (load_inputs) | {check:.2f} | "
              f"{check / floor:.2f} | |")
        print(f"| `parasite batch` | {batch_wall:.2f} | {batch_wall / floor:.2f} | "
              f"{batch_mem:.0f} |")
        print(f"| `parasite report` per board | {sep_wall:.2f} | {sep_wall / floor:.2f} | "
              f"{sep_mem:.0f} (largest) |")
        if a.cluster:
            import distributed

            with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                          dashboard_address=None) as cluster:
                _run([*PARASITE, "batch", "-o", str(d / "warm"), *files[:2], "-q", "--inductance",
                      a.inductance, "--scheduler", cluster.scheduler_address])  # workers' imports
                w, m = _run([*PARASITE, "batch", "-o", str(d / "cluster"), *files, "-q",
                             "--inductance", a.inductance, "--scheduler",
                             cluster.scheduler_address])
            same_cluster = all((d / "cluster" / f"b{k}.json").read_bytes()
                               == (d / "batch" / f"b{k}.json").read_bytes()
                               for k in range(len(boards)))
            print(f"| `parasite batch --scheduler` (2 workers x 1 thread, warmed) | {w:.2f} | "
                  f"{w / floor:.2f} | {m:.0f} (this process) |")
            print(f"\ncluster's reports the same bytes as in process: {same_cluster}")
        print(f"batch's reports the same bytes as `report`: {same}; as the floor's: {same_floor}")


if __name__ == "__main__":
    main()
