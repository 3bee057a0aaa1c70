"""Benchmark: ``parasite report`` end to end on a meshed power stage too big for the
dense matrix, with the inductance operator (``--inductance fast``).

The board (invented test data): a half-bridge's three pours on three layers, the
input net ``vin`` on ``top`` (20 x 30 mm), the switch node ``sw`` on ``mid``
(25 x 30 mm) and the ground ``0`` on ``bottom`` (the whole 40 x 30 mm), every
part's pin on its net's pour; the switches are resistors (RH, RL). Three loops:
the hot loop (input capacitor, both switches) at 100 MHz, the output loop (low
switch, inductor, output capacitor; copper-less output net) at the low-frequency
limit, and the input loop (source and input capacitor) at 1 MHz with a mutual
limit against the hot loop. The pours' ``cell`` sets the number of segments N
(fitted on two sizes: about 13,000 / cell + 980 / cell^2 with cell in mm, the first
term from the refined grid lines through the pins; the report gives the real N).

Each size runs ``python -m parasite report --format json --inductance fast`` in a
subprocess and reads its wall time and peak resident memory (``resource.getrusage``
of the children, Linux: KiB); the per-loop GMRES iterations come from the report.
Targets: 20,000 segments end to end within 3 GB; 100,000 within 10 minutes and
8 GB. ``--dense`` also runs the dense path at the sizes it accepts (the floor to
compare with).

Run: ``.venv/bin/python benchmarks/bench_board_scale.py [--sizes 5000 20000] [--cells 0.27]``
(0.27 mm: the 100,000-cell board, 98,547 segments). ``--augment`` runs ``augment`` (the
netlist with the copper's reduced model, :mod:`parasite.network.reduce_operator` on the
fast path) instead, and prints the model's order, error and greedy steps.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

NETLIST = """power stage with meshed pours (invented benchmark board)
V1 vin 0 DC 12
C1 vin 0 10u
RH vin sw 10m
RL sw 0 10m
L1 sw out 1u
C2 out 0 22u
RLOAD out 0 2
.op
.end
"""

def cell_for(n: int) -> float:
    """Pour cell size (mm) giving about ``n`` segments: the root of
    ``n = 13040 / cell + 984 / cell^2`` (fitted at cell 2 and 3 mm)."""
    a, b = 984.0, 13040.0
    x = (-b + math.sqrt(b * b + 4.0 * a * n)) / (2.0 * a)
    return 1.0 / x


def routes_text(cell: float, *, limit: str = "20n", mutual_limit: str = "5n") -> str:
    """The routes file of the board at pour cell size ``cell`` (mm)."""
    layers = (('top', 1.6), ('mid', 1.0), ('bottom', 0.0))
    out = ['format = "parasite-routes/1"', 'units = "mm"', ""]
    for name, z in layers:
        out += [f"[layers.{name}]", f"z = {z}", "thickness = 0.035", ""]
    pours = (("vin", "top", [[0, 0], [20, 0], [20, 30], [0, 30]], "input pour"),
             ("sw", "mid", [[15, 0], [40, 0], [40, 30], [15, 30]], "switch node"),
             ("0", "bottom", [[0, 0], [40, 0], [40, 30], [0, 30]], "ground pour"))
    for net, layer, outline, name in pours:
        out += ["[[pour]]", f'net = "{net}"', f'layer = "{layer}"', f"outline = {outline}",
                f"cell = {cell:.6g}", f'name = "{name}"', ""]
    pins = (("V1:p", (2, 15), "top"), ("V1:n", (2, 15), "bottom"),
            ("C1:1", (12, 26), "top"), ("C1:2", (12, 26), "bottom"),
            ("RH:1", (18, 20), "top"), ("RH:2", (18, 20), "mid"),
            ("RL:1", (25, 8), "mid"), ("RL:2", (25, 8), "bottom"),
            ("L1:1", (36, 16), "mid"), ("C2:2", (38, 4), "bottom"))
    for term, (x, y), layer in pins:
        out += ["[[pin]]", f'terminal = "{term}"', f"at = [{x}, {y}]", f'layer = "{layer}"', ""]
    out += ["[[loop]]", 'name = "hot loop"',
            'path = ["C1:1", "RH:1", "RH:2", "RL:1", "RL:2", "C1:2"]',
            f'limit = "{limit}"', "frequency = 100e6", "",
            "[[loop]]", 'name = "output loop"',
            'path = ["RL:1", "L1:1", "L1:2", "C2:1", "C2:2", "RL:2"]', "",
            "[[loop]]", 'name = "input loop"', 'path = ["V1:p", "C1:1", "C1:2", "V1:n"]',
            "frequency = 1e6", f'mutual = [{{loop = "hot loop", limit = "{mutual_limit}"}}]', ""]
    return "\n".join(out)


def write_board(folder: Path, cell: float, **kw: str) -> tuple[str, str]:
    """Write the netlist and routes file into ``folder``; their paths."""
    cir, routes = folder / "stage.cir", folder / "stage.routes.toml"
    cir.write_text(NETLIST)
    routes.write_text(routes_text(cell, **kw))
    return str(cir), str(routes)


def run(cir: str, routes: str, inductance: str, out: Path, command: str = "report") -> dict:
    """One ``report`` (or ``augment``, its JSON report beside the netlist) run in a fresh
    process: wall s, peak RSS MiB, the report."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t0 = time.perf_counter()
    args = (["report", cir, routes, "--format", "json", "-o", str(out)] if command == "report"
            else ["augment", cir, routes, "-o", str(out.with_suffix(".cir")), "--report",
                  str(out)])
    proc = subprocess.run([sys.executable, "-m", "parasite", *args, "--inductance", inductance],
                          capture_output=True, text=True, cwd=ROOT)
    wall = time.perf_counter() - t0
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    if proc.returncode != 0:
        return {"error": proc.stderr.strip()[-400:], "wall": wall}
    report = json.loads(out.read_text())
    return {"wall": wall, "peak_mib": peak / 1024 if peak > before else float("nan"),
            "report": report}


def model_line(model: dict) -> str:
    """The reduced model of an ``augment`` report: order, error, greedy steps."""
    steps = model.get("steps")
    text = (f"model {model.get('written')}: order {model.get('order')} of "
            f"{model.get('full_order')}, {model.get('ports')} ports, max error "
            f"{model.get('max_error', float('nan')):.2e}")
    if steps:
        text += (", steps at " + " ".join(f"{st['frequency']:.3g} Hz" for st in steps)
                 + f", GMRES {model.get('gmres_iterations')} iterations")
    return text


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="*", default=[5000, 20000])
    ap.add_argument("--cells", type=float, nargs="+", default=[],
                    help="pour cell sizes (mm) to run as well (the size fit is rough below "
                         "0.5 mm: 0.27 mm gives 98,547 segments)")
    ap.add_argument("--dense", action="store_true", help="also the dense path where accepted")
    ap.add_argument("--augment", action="store_true",
                    help="run augment (the netlist with the reduced model) instead of report")
    args = ap.parse_args()
    print(f"{'N':>8} {'path':>5} {'wall s':>8} {'peak MiB':>9}  loops (L nH, GMRES it)")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        for n, cell in ([(n, cell_for(n)) for n in args.sizes]
                        + [(round(1e6 * c), c) for c in args.cells]):
            cir, routes = write_board(folder, cell)
            for path in (["fast", "dense"] if args.dense else ["fast"]):
                command = "augment" if args.augment else "report"
                r = run(cir, routes, path, folder / f"{n}-{path}.json", command)
                if "error" in r:
                    print(f"{n:>8} {path:>5} {r['wall']:8.1f}  error: {r['error']}")
                    continue
                rep = r["report"]
                loops = ", ".join(
                    f"{lp['name']} {1e9 * lp['inductance']:.4f}"
                    + (f" ({lp['solver']['iterations']})" if "solver" in lp else "")
                    for lp in rep["loops"])
                segs = rep["summary"]["segments"]
                print(f"{segs:>8} {path:>5} {r['wall']:8.1f} {r['peak_mib']:9.0f}  {loops}",
                      flush=True)
                if args.augment:
                    print(f"{'':>24}  {model_line(rep['model'])}", flush=True)
    print(f"(cores: {os.cpu_count()}; peak RSS of the report process; invented board)")


if __name__ == "__main__":
    main()
