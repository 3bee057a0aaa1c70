"""ngspice transient time: ideal circuit, full copper model, reduced copper model.

Two boards (both invented):

* the demo (fixtures/demo): the ideal netlist, the netlist written with every
  branch (``--model full``, coupling threshold chosen per board, and every
  coupling, threshold 0) and with the reduced model (``--model reduced``);
  the first rising edge's ring frequency and overshoot of v(sw) for each;
* the generated meshed board of ``bench_threshold.py`` (``loops`` loops with
  ladder returns joined every 2 mm), each loop driven by a 1 A current pulse
  and closed by a resistor with a capacitor across it so that it rings: the
  same three netlists; the largest deviation of the first loop's voltage from
  the fully coupled model's, as a fraction of its peak.

Wall time is the median of ``--repeat`` runs of ``ngspice -b`` (parse and
simulate); the ratio is against the ideal circuit's run. Prints a markdown
table for benchmarks/RESULTS.md.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_threshold import board  # noqa: E402

from parasite.augment import augment_files  # noqa: E402
from parasite.ring.metrics import ring_metrics  # noqa: E402
from parasite.spice import run_ngspice  # noqa: E402


def _timed(deck: bytes, base: Path, repeat: int) -> tuple[float, object]:
    times, sim = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        sim = run_ngspice(deck, base_dir=base, timeout=3600)
        times.append(time.perf_counter() - t)
    return statistics.median(times), sim


def _variants(cir: Path, routes: Path) -> dict[str, tuple[bytes, str]]:
    out = {"ideal": (cir.read_bytes(), "-")}
    for label, kw in (("full, threshold per board", {"model": "full"}),
                      ("full, every coupling", {"model": "full", "min_coupling": 0.0}),
                      ("reduced", {"model": "reduced"})):
        t = time.perf_counter()
        r = augment_files(str(cir), str(routes), **kw)
        m = r.report["model"]
        what = (f"order {m['order']} of {m['full_order']}, {m['ports']} ports, "
                f"{m['size']['reduced']} elements vs {m['size']['full']}, "
                f"err {m['max_error_as_written']:.1e}" if "order" in m else "")
        out[label] = (r.netlist_bytes, f"{what} (augment {time.perf_counter() - t:.2f} s)")
    return out


def demo(repeat: int) -> list[str]:
    d = ROOT / "fixtures" / "demo"
    rows, ideal = [], None
    for label, (deck, what) in _variants(d / "buck.cir", d / "buck.routes.toml").items():
        t, sim = _timed(deck, d, repeat)
        ideal = ideal or t
        e = next(e for e in ring_metrics(np.asarray(sim.scale), np.asarray(sim.vector("v(sw)")))
                 if e.direction > 0)
        ring = f"{e.frequency / 1e6:.3f} MHz, overshoot {e.overshoot:.3f} V" if e.frequency else "-"
        rows.append(f"| demo | {label} | {t:.2f} s | {t / ideal:.2f} | {ring} | {what} |")
    return rows


def meshed(loops: int, repeat: int, tmp: Path) -> list[str]:
    routes, netlist = board(loops, ladder=True)
    for i in range(loops):
        netlist = netlist.replace(f"{{src{i}}}", "PULSE(0 1 0 1n 1n 30n 1)")
        netlist += f"C{i} a{i} b{i} 1n\n"
    netlist += ".options method=gear\n.tran 0.05n 100n 0 0.05n\n.end\n"
    (tmp / "m.cir").write_text(netlist)
    (tmp / "m.routes.toml").write_text(routes)
    rows, ideal, ref = [], None, None
    for label, (deck, what) in _variants(tmp / "m.cir", tmp / "m.routes.toml").items():
        t, sim = _timed(deck, tmp, repeat)
        ideal = ideal or t
        tt = np.asarray(sim.scale)
        v = np.interp(np.linspace(0, 100e-9, 2001), tt,
                      np.asarray(sim.vector("v(a0)")) - np.asarray(sim.vector("v(b0)")))
        if label == "full, every coupling":
            ref = v
        rows.append((label, t, v, what))
    out = []
    for label, t, v, what in rows:
        dev = "-" if label == "ideal" else f"{np.max(np.abs(v - ref)) / np.max(np.abs(ref)):.2%}"
        out.append(f"| meshed, {loops} loops | {label} | {t:.2f} s | {t / ideal:.2f} | "
                   f"deviation {dev} | {what} |")
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--loops", type=int, nargs="*", default=[4, 8])
    args = ap.parse_args()
    import tempfile

    print("| board | netlist | ngspice time | vs ideal | result | model |")
    print("|---|---|---|---|---|---|")
    for row in demo(args.repeat):
        print(row, flush=True)
    for n in args.loops:
        with tempfile.TemporaryDirectory() as tmp:
            for row in meshed(n, args.repeat, Path(tmp)):
                print(row, flush=True)


if __name__ == "__main__":
    main()
