"""Benchmark: load a generated routes file of about 20,000 segments and build
its copper graph. Prints the sizes, the time of each step (median of a few
runs) and the peak memory (tracemalloc, which counts numpy's buffers too).

    .venv/bin/python benchmarks/bench_graph.py [--segments 20000] [--repeat 3]

The board is generated (invented, for timing only): four copper layers with a
ground plane on in1; each net is a zig-zag bus of 39 pieces on one layer, ten
T-junction branches, five vias to a short stub on another layer, five pins on
vertices and one pin inside a trace's width. Nets lie in separate 1 mm bands,
so nothing overlaps. Results on the development machine (2 cores) are noted
in the project's report, not asserted anywhere.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from geometry.graph import build_graph  # noqa: E402
from geometry.routes import load_routes  # noqa: E402

SIGNAL = ["top", "in2", "bottom"]
SEGMENTS_PER_NET = 80  # counted from the generator below (checked at run time)


def board_text(n_nets: int) -> tuple[str, list[str]]:
    """TOML text of the generated board and the net of each pin."""
    out = [
        'format = "parasite-routes/1"',
        'units = "mm"',
        "",
        "[layers.top]\nz = 1.565\nthickness = 0.035\n",
        '[layers.in1]\nz = 1.2\nthickness = 0.035\nplane = "0"\n',
        "[layers.in2]\nz = 0.4\nthickness = 0.035\n",
        "[layers.bottom]\nz = 0.0\nthickness = 0.035\n",
    ]
    traces, vias, pins, pin_nets = [], [], [], []
    for k in range(n_nets):
        net = f"n{k}"
        layer = SIGNAL[k % 3]
        other = SIGNAL[(k + 1) % 3]
        y0 = 1.0 * k
        pts = [(2.0 * i, y0 + (0.2 if i % 2 else 0.0)) for i in range(40)]
        traces.append((net, layer, 0.2, pts))
        for b in range(10):  # branches from the middle of pieces 1, 5, ...
            i = 1 + 4 * b
            (xa, ya), (xb, yb) = pts[i], pts[i + 1]
            xm, ym = 0.5 * (xa + xb), 0.5 * (ya + yb)
            traces.append((net, layer, 0.1, [(xm, ym), (xm + 0.3, ym + 0.5), (xm + 0.6, ym + 0.5)]))
        for v in range(5):  # vias at vertices 5, 13, ... down to a stub on another layer
            x, y = pts[5 + 8 * v]
            vias.append((net, (x, y), layer, other))
            traces.append((net, other, 0.2, [(x, y), (x + 0.8, y)]))
        for p in range(5):
            x, y = pts[2 + 8 * p]
            pins.append((f"R{k}_{p}:1", (x, y), layer))
            pin_nets.append(net)
        (xa, ya), (xb, yb) = pts[30], pts[31]
        pins.append((f"C{k}:1", (0.5 * (xa + xb), 0.5 * (ya + yb) + 0.05), layer))
        pin_nets.append(net)
    for net, layer, width, pts in traces:
        p = ", ".join(f"[{x:.4f}, {y:.4f}]" for x, y in pts)
        out.append(f'[[trace]]\nnet = "{net}"\nlayer = "{layer}"\nwidth = {width}\npoints = [{p}]\n')
    for net, (x, y), a, b in vias:
        out.append(f'[[via]]\nnet = "{net}"\nat = [{x:.4f}, {y:.4f}]\nfrom = "{a}"\nto = "{b}"\n'
                   f"diameter = 0.3\nwall = 0.025\n")
    for term, (x, y), layer in pins:
        out.append(f'[[pin]]\nterminal = "{term}"\nat = [{x:.4f}, {y:.4f}]\nlayer = "{layer}"\n')
    return "\n".join(out), pin_nets


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--segments", type=int, default=20_000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    n_nets = max(1, round(args.segments / SEGMENTS_PER_NET))
    text, pin_nets = board_text(n_nets)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "generated.routes.toml"
        path.write_text(text)
        t_load, t_graph = [], []
        for _ in range(args.repeat):
            t0 = time.perf_counter()
            routes = load_routes(path)
            t1 = time.perf_counter()
            graph = build_graph(routes, pin_nets)
            t2 = time.perf_counter()
            t_load.append(t1 - t0)
            t_graph.append(t2 - t1)
        tracemalloc.start()
        routes = load_routes(path)
        graph = build_graph(routes, pin_nets)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
    n_seg = len(graph.segments)
    print(f"board: {n_nets} nets, {len(routes.traces)} traces, {len(routes.vias)} vias, "
          f"{len(routes.pins)} pins, {len(text) / 1e6:.1f} MB of TOML")
    print(f"graph: {n_seg} segments, {len(graph.nodes)} nodes, {len(graph.warnings)} warnings")
    print(f"load_routes: {statistics.median(t_load):.2f} s   build_graph: "
          f"{statistics.median(t_graph):.2f} s   (median of {args.repeat})")
    print(f"peak memory while loading and building (tracemalloc): {peak / 2**20:.0f} MiB")
    if graph.warnings:
        print("first warning:", graph.warnings[0])


if __name__ == "__main__":
    main()
