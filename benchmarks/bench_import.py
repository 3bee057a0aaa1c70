"""Benchmark: import a generated KiCad board of 10,000 track segments and 100
filled zones. Prints the file size, the time of each step (median of a few
runs) and the ratio to a floor: one regular-expression pass that splits the
file into its tokens (no reader can do with less than looking at each token
once).

    .venv/bin/python benchmarks/bench_import.py [--segments 10000] [--zones 100] [--repeat 3]

The board is generated (invented, for timing only), in KiCad 6's format: two
copper layers, 100 nets, each a zig-zag of tracks on F.Cu from a two-pad
footprint to the other pad, with a via and a bottom-side track every 20
pieces; one filled zone per net on B.Cu, a rectangle with two holes joined
by zero-width cuts as KiCad writes fills. Imported without a netlist and
with --no-pours (the fills are still read and their holes rebuilt).
"""

from __future__ import annotations

import argparse
import re
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from geometry.kicad import Options, import_board, read_board  # noqa: E402


def board_text(segments: int, zones: int) -> str:
    nets = max(zones, 1)
    per = segments // nets
    out = ['(kicad_pcb (version 20211014) (generator bench)', '  (general (thickness 1.6))',
           '  (layers (0 "F.Cu" signal) (31 "B.Cu" signal) (44 "Edge.Cuts" user))', '  (net 0 "")']
    out += [f'  (net {k + 1} "N{k}")' for k in range(nets)]
    for k in range(nets):
        y0 = 3.0 * k
        x_end = 0.5 * per
        out.append(f'  (footprint "b:R" (layer "F.Cu") (at {x_end / 2} {y0}) '
                   f'(fp_text reference "R{k}" (at 0 0) (layer "F.SilkS"))')
        for num, x in (("1", -x_end / 2), ("2", x_end / 2)):
            out.append(f'    (pad "{num}" smd rect (at {x} 0) (size 0.6 0.8) (layers "F.Cu") '
                       f'(net {k + 1} "N{k}"))')
        out.append("  )")
        for i in range(per):
            xa, xb = 0.5 * i, 0.5 * (i + 1)
            ya, yb = y0 + (0.3 if i % 2 else 0.0), y0 + (0.0 if i % 2 else 0.3)
            if i == per - 1:
                yb = y0
            layer = "B.Cu" if i % 20 == 10 else "F.Cu"
            out.append(f'  (segment (start {xa} {ya}) (end {xb} {yb}) (width 0.2) (layer "{layer}") '
                       f"(net {k + 1}))")
            if i % 20 in (9, 10):
                out.append(f'  (via (at {xb} {yb}) (size 0.5) (drill 0.25) (layers "F.Cu" "B.Cu") '
                           f"(net {k + 1}))")
    for k in range(zones):
        y0, y1 = 3.0 * k + 1.0, 3.0 * k + 2.8
        pts = [(0, y0), (5, y0), (5, y0 + 0.5), (5, y0 + 1.2), (6, y0 + 1.2), (6, y0 + 0.5), (5, y0 + 0.5),
               (5, y0), (20, y0), (20, y0 + 0.4), (20, y0 + 1.3), (22, y0 + 1.3), (22, y0 + 0.4),
               (20, y0 + 0.4), (20, y0), (40, y0), (40, y1), (0, y1)]
        xy = " ".join(f"(xy {x} {y})" for x, y in pts)
        out.append(f'  (zone (net {k + 1}) (net_name "N{k}") (layer "B.Cu") (polygon (pts (xy 0 {y0}) '
                   f'(xy 40 {y0}) (xy 40 {y1}) (xy 0 {y1}))) (filled_polygon (layer "B.Cu") (pts {xy})))')
    out.append(")")
    return "\n".join(out) + "\n"


def _median(fn, repeat: int) -> float:  # type: ignore[no-untyped-def]
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--segments", type=int, default=10_000)
    ap.add_argument("--zones", type=int, default=100)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "bench.kicad_pcb"
        path.write_text(board_text(args.segments, args.zones))
        token = re.compile(r'\s*(?:(\()|(\))|"((?:[^"\\]|\\.)*)"|([^\s()"]+))', re.S)
        floor = _median(lambda: token.findall(path.read_text()), args.repeat)
        board = read_board(path)
        t_read = _median(lambda: read_board(path), args.repeat)
        opts = Options(skip_pours=True)
        t_conv = _median(lambda: import_board(board, None, opts), args.repeat)
        text, draft = import_board(board, None, opts)
        fills = sum(len(f) for z in board.zones for f in z.fills.values())
        print(f"board: {path.stat().st_size / 1e6:.1f} MB, {len(board.tracks)} tracks, "
              f"{len(board.vias)} vias, "
              f"{len(board.pads)} pads, {len(board.zones)} zones ({fills} fills, "
              f"{sum(len(f.holes) for z in board.zones for fl in z.fills.values() for f in fl)} holes)")
        print(f"tokens only (floor): {floor:.3f} s")
        print(f"read_board:          {t_read:.3f} s  ({t_read / floor:.1f} x the floor)")
        print(f"convert + write:     {t_conv:.3f} s  ({len(draft.traces)} traces, {len(text) / 1e6:.1f} MB)")
        print(f"import in all:       {t_read + t_conv:.3f} s")


if __name__ == "__main__":
    main()
