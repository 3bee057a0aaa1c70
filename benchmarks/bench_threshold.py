"""How low must --min-coupling be? Loop inductance and ngspice time against the
coupling threshold, measured through ngspice itself.

A generated board (invented for this benchmark): ``LOOPS`` current loops side
by side over a ground plane, each a go trace on the top layer with a 45-degree
jog and a return trace on the inner signal layer under it, cut into pieces of
at most ``PIECE`` mm (as pins, junctions and vias cut real traces), every loop
driven by its own current source and closed by a resistor. For every
threshold, the augmented netlist (series chains merged, as ``augment``
writes it) is simulated:

* an AC analysis per loop, with only that loop's source at 1 A: the loop
  inductance Im(V/I)/omega seen by ngspice, compared with the dense reference
  (every non-zero coupling written, threshold 0);
* a transient with every loop driven by a 1 ns current step: ngspice's run
  time, and the largest fully coupled group of inductors.

The result is printed as a markdown table for benchmarks/RESULTS.md.
"""

from __future__ import annotations

import math
import re
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from parasite.augment import augment_files  # noqa: E402
from parasite.spice import run_ngspice  # noqa: E402

LOOPS = 6
PIECE = 1.0  # mm
F_AC = 10e6
MAX_K_TRANSIENT = 3000  # skip the transient above this many K lines (see ngspice-facts)
THRESHOLDS: list[float | None] = [0.0, None, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2]


def _split(points: list[tuple[float, float]], piece: float) -> list[tuple[float, float]]:
    out = [points[0]]
    for (x0, y0), (x1, y1) in zip(points, points[1:], strict=False):
        n = max(1, math.ceil(math.hypot(x1 - x0, y1 - y0) / piece))
        out += [(x0 + (x1 - x0) * k / n, y0 + (y1 - y0) * k / n) for k in range(1, n + 1)]
    return out


def _trace(net: str, layer: str, pts: list[tuple[float, float]], width: float) -> str:
    p = ", ".join(f"[{x:.4f}, {y:.4f}]" for x, y in pts)
    return f'[[trace]]\nnet = "{net}"\nlayer = "{layer}"\nwidth = {width}\npoints = [{p}]\n\n'


def _pin(term: str, at: tuple[float, float], layer: str) -> str:
    return f'[[pin]]\nterminal = "{term}"\nat = [{at[0]:.4f}, {at[1]:.4f}]\nlayer = "{layer}"\n\n'


def board(loops: int, ladder: bool = False) -> tuple[str, str]:
    """Routes and netlist texts of the generated board."""
    routes = ('format = "parasite-routes/1"\nunits = "mm"\n\n'
              '[layers.top]\nz = 1.565\nthickness = 0.035\n\n'
              '[layers.in1]\nz = 1.2\nthickness = 0.035\n\n'
              '[layers.in2]\nz = 0.4\nthickness = 0.035\nplane = "0"\n\n')
    net = ["generated board for the coupling-threshold benchmark (invented)"]
    for i in range(loops):
        x0 = 4.0 * i
        go = [(x0, 0.0), (x0, 10.0), (x0 + 3.0, 13.0), (x0 + 3.0, 20.0)]
        ret = [(x0 + 3.0, 20.0), (x0 + 3.0, 13.0), (x0, 10.0), (x0, 0.0)]
        routes += _trace(f"a{i}", "top", _split(go, PIECE), 0.5)
        routes += _trace(f"b{i}", "in1", _split(ret, PIECE), 0.5)
        if ladder:  # a second return trace 1 mm to the side, joined to the first every 2 mm
            side = [(x + 1.0, y) for x, y in _split(ret, 2.0)]
            routes += _trace(f"b{i}", "in1", side, 0.5)
            for (x, y), (xs, ys) in zip(_split(ret, 2.0), side, strict=True):
                routes += _trace(f"b{i}", "in1", [(x, y), (xs, ys)], 0.5)
        routes += _pin(f"I{i}:n", go[0], "top") + _pin(f"R{i}:1", go[-1], "top")
        routes += _pin(f"R{i}:2", ret[0], "in1") + _pin(f"I{i}:p", ret[-1], "in1")
        routes += (f'[[loop]]\nname = "loop {i}"\npath = ["I{i}:n", "R{i}:1", "R{i}:2", "I{i}:p"]\n'
                   f"frequency = {F_AC}\n\n")
        net += [f"I{i} b{i} a{i} {{src{i}}}", f"R{i} a{i} b{i} 10m", f"RL{i} b{i} 0 1meg"]
    return routes, "\n".join(net) + "\n"


def _deck(netlist: str, analysis: str, sources: dict[int, str]) -> str:
    text = netlist
    for i in range(LOOPS):
        text = text.replace(f"{{src{i}}}", sources.get(i, "0"))
    return text.replace("\n.end\n", f"\n{analysis}\n.end\n")


def _largest_group(text: str) -> int:
    parent: dict[str, str] = {}

    def find(a: str) -> str:
        parent.setdefault(a, a)
        while parent[a] != a:
            a = parent[a]
        return a

    for a, b in re.findall(r"^Kp_\S+\s+(\S+)\s+(\S+)", text, re.MULTILINE):
        parent[find(a)] = find(b)
    sizes: dict[str, int] = {}
    for a in list(parent):
        sizes[find(a)] = sizes.get(find(a), 0) + 1
    return max(sizes.values(), default=0)


def main(keep_segments: bool, ladder: bool = False) -> None:
    routes, netlist = board(LOOPS, ladder)
    with tempfile.TemporaryDirectory() as tmp:
        rp, np_ = Path(tmp) / "b.routes.toml", Path(tmp) / "b.cir"
        rp.write_text(routes)
        np_.write_text(netlist + ".end\n")
        rows = []
        dense_l: list[float] = []
        for thr in THRESHOLDS:
            res = augment_files(str(np_), str(rp), min_coupling=thr, frequency=F_AC,
                                keep_segments=keep_segments)
            text = res.netlist_bytes.decode()
            n_l = len(re.findall(r"^Lp_", text, re.MULTILINE))
            n_k = len(re.findall(r"^Kp_", text, re.MULTILINE))
            ls = []
            for i in range(LOOPS):
                deck = _deck(text, f".ac lin 1 {F_AC} {F_AC}", {i: "AC 1"})
                sim = run_ngspice(deck, base_dir=tmp)
                card = re.search(rf"^I{i} (\S+) (\S+)", text, re.MULTILINE)
                assert card is not None
                plus, minus = card.groups()
                z = complex(np.asarray(sim.vector(f"v({minus})"))[0]
                            - np.asarray(sim.vector(f"v({plus})"))[0])
                ls.append(z.imag / (2 * math.pi * F_AC))
            if thr == 0.0:
                dense_l = ls
            label = (f"auto ({res.report['summary']['min_coupling']:g})" if thr is None else f"{thr:g}")
            err = max(abs(a / b - 1) for a, b in zip(ls, dense_l, strict=True))
            steps = {i: "PULSE(0 1 1n 1n 1n 1 2)" for i in range(LOOPS)}
            tran = _deck(text, ".tran 0.05n 100n 0 0.05n", steps)
            dt = float("nan")
            if n_k <= MAX_K_TRANSIENT:  # a fully coupled group of hundreds takes ngspice hours
                t0 = time.perf_counter()
                run_ngspice(tran, base_dir=tmp, timeout=3600)
                dt = time.perf_counter() - t0
            report_l = res.report["loops"][0]["inductance"]
            rows.append((label, n_l, n_k, _largest_group(text), 1e9 * ls[0], 1e9 * report_l, 100 * err, dt,
                         res.report["summary"]["sparsification"]))
    segs = res.report["summary"]["segments"]
    mode = "one R-L pair per segment" if keep_segments else "series chains merged"
    print(f"{LOOPS} loops, {segs} segments, {mode}"
          f"{', each return a ladder of two traces joined every 2 mm' if ladder else ''}; "
          f"loop inductance by ngspice AC at {F_AC:g} Hz\n")
    print("| min-coupling | inductors | K lines | largest coupled group | loop 0 nH (ngspice) "
          "| loop 0 nH (report) | worst loop error vs dense | ngspice transient s | method |")
    print("|---|---|---|---|---|---|---|---|---|")
    for label, n_l, n_k, grp, l0, lr, err, dt, meth in rows:
        print(f"| {label} | {n_l} | {n_k} | {grp} | {l0:.4f} | {lr:.4f} | {err:.3f}% | {dt:.2f} | {meth} |")


if __name__ == "__main__":
    main(keep_segments=False, ladder=True)
    print()
    main(keep_segments=True)
    print()
    main(keep_segments=False)
