"""The coupling threshold against ngspice's run time and the answer.

For the demo board, augmented with several ``--min-coupling`` values (0 means
every non-zero coupling, the dense reference), this measures in one run:
the number of coupling statements, ngspice's transient time, the ring
frequency and peak of the switch node after the rising edge, and the hot
loop's inductance from an ngspice AC analysis of the augmented netlist (a port
in series with the input capacitors at the loop's frequency). It also runs the
original netlist. Results are printed as a markdown table for
benchmarks/RESULTS.md.
"""

from __future__ import annotations

import re
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from parasite.augment import augment_files  # noqa: E402
from parasite.spice import run_ngspice  # noqa: E402

DEMO = ROOT / "fixtures" / "demo"
THRESHOLDS: list[float | None] = [0.0, None, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2]


def ring_metrics(t: np.ndarray, v: np.ndarray) -> tuple[float, float]:
    """Peak and ring frequency after the first rising edge through half the peak."""
    half = 0.5 * np.max(v)
    rise = int(np.flatnonzero((v[:-1] < half) & (v[1:] >= half))[0])
    window = (t > t[rise]) & (t < t[rise] + 150e-9)
    tw, vw = t[window], v[window]
    settle = np.median(vw[len(vw) // 2:])
    x = vw - settle
    s = np.signbit(x)
    idx = np.flatnonzero(s[:-1] != s[1:])
    if len(idx) < 3:
        return float(np.max(vw)), float("nan")
    tc = tw[idx] - x[idx] * (tw[idx + 1] - tw[idx]) / (x[idx + 1] - x[idx])
    f = (len(tc) - 1) / (2 * (tc[-1] - tc[0]))
    return float(np.max(vw)), float(f)


def timed_run(deck: bytes) -> tuple[float, np.ndarray, np.ndarray]:
    t0 = time.perf_counter()
    res = run_ngspice(deck, base_dir=DEMO, timeout=3600)
    dt = time.perf_counter() - t0
    return dt, np.asarray(res.scale), np.asarray(res.vector("v(sw)"))


def main() -> None:
    rows = []
    dt, t, v = timed_run((DEMO / "buck.cir").read_bytes())
    peak, f = ring_metrics(t, v)
    rows.append(("original (ideal wires)", "-", 0, dt, peak, f))
    for thr in THRESHOLDS:
        res = augment_files(str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"), min_coupling=thr)
        nk = len(re.findall(rb"^Kp_", res.netlist_bytes, re.MULTILINE))
        dt, t, v = timed_run(res.netlist_bytes)
        peak, f = ring_metrics(t, v)
        loop = next((lp["inductance"] for lp in res.report["loops"] if lp["name"] == "hot loop"),
                    float("nan"))
        name = (f"auto ({res.report['summary']['min_coupling']:g})" if thr is None
                else f"min-coupling {thr:g}" + (" (dense)" if thr == 0 else ""))
        rows.append((name, f"{1e9 * loop:.4f}",
                     nk, dt, peak, f))
    print("| netlist | hot loop nH (report) | K lines | ngspice s | sw peak V | ring MHz |")
    print("|---|---|---|---|---|---|")
    for name, loop, nk, dt, peak, f in rows:
        print(f"| {name} | {loop} | {nk} | {dt:.2f} | {peak:.2f} | {f / 1e6:.1f} |")


if __name__ == "__main__":
    main()
