"""DC-only copper against broadband ladders on the demo board (invented data): the ring
at the switch node side by side, and ngspice's run time with and without the ladders.

    .venv/bin/python benchmarks/compare_broadband.py [OUT_DIR]

Prints the last rising and falling edge of each simulation (ring frequency, damping
ratio, overshoot, settling time) and the simulator's wall time for each netlist.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from parasite.augment import augment_files  # noqa: E402
from parasite.network.ladders import BroadbandOptions  # noqa: E402
from parasite.ring.analyse import analyse_ring  # noqa: E402
from parasite.spice import run_ngspice  # noqa: E402

DEMO = ROOT / "fixtures" / "demo"


def main() -> None:
    out = Path(sys.argv[1]) if len(sys.argv) > 1 else ROOT / "build" / "demo"
    out.mkdir(parents=True, exist_ok=True)
    cir, routes = str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml")
    rows, sims = [], []
    for label, wide in (("DC copper", False), ("broadband", True)):
        t0 = time.perf_counter()
        res = augment_files(cir, routes, broadband=BroadbandOptions() if wide else None)
        t_aug = time.perf_counter() - t0
        t0 = time.perf_counter()
        run_ngspice(res.netlist_bytes.decode(), base_dir=DEMO)
        sims.append((label, t_aug, time.perf_counter() - t0, res.netlist_text.count("\nL")))
        rep = analyse_ring(cir, routes, "sw", broadband=wide).report
        for direction in ("rising", "falling"):
            edges = [e for e in rep["simulations"]["augmented"]["edges"] if e["direction"] == direction]
            if edges:
                e = edges[-1]
                rows.append((label, direction, e["frequency"], e["damping_ratio"], e["overshoot"],
                             e["settling_time"]))
    print("Switch-node ring of the demo board (invented data), DC-only copper vs broadband ladders:")
    print(f"{'copper':<10} {'edge':<8} {'ring (MHz)':>10} {'damping':>8} {'overshoot (V)':>14} "
          f"{'settling (ns)':>14}")
    for label, d, f, z, ov, st in rows:
        def num(x: float | None, s: float, fmt: str) -> str:
            return "-" if x is None else format(x * s, fmt)
        print(f"{label:<10} {d:<8} {num(f, 1e-6, '.1f'):>10} {num(z, 1, '.4f'):>8} "
              f"{num(ov, 1, '.2f'):>14} {num(st, 1e9, '.1f'):>14}")
    print()
    print(f"{'copper':<10} {'augment (s)':>11} {'ngspice (s)':>11} {'inductors':>9}")
    for label, ta, ts, n in sims:
        print(f"{label:<10} {ta:>11.1f} {ts:>11.1f} {n:>9}")


if __name__ == "__main__":
    main()
