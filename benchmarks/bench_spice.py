"""ngspice in batch mode (subprocess) against PySpice's shared-library mode.

Both run the same netlist text and hand back numpy arrays of every vector of
the transient; the time includes starting the simulator, loading the netlist,
simulating and reading the waveforms. Median of ``--repeat`` runs.

Circuits (invented for this benchmark):

* ``ring``: one series RLC loop that rings at about 100 MHz, stepped by a fast
  edge; about 4,000 time points.
* ``coupled-N``: N series R-L segments in a loop with a capacitor, every pair of
  segments coupled with k decaying with their distance (a small dense coupled
  group, as the augmented netlists produce); a few thousand time points.

Run: ``.venv/bin/python benchmarks/bench_spice.py [--repeat 3]``.
"""

from __future__ import annotations

import argparse
import logging
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from parasite.spice import run_ngspice  # noqa: E402


def ring_deck() -> str:
    return """series RLC ring, about 4000 points
V1 in 0 PULSE(0 48 10n 1n 1n 200n 400n)
R1 in a 0.2
L1 a b 5n
C1 b 0 500p
.tran 0.1n 400n 0 0.1n
.end
"""


def coupled_deck(n: int) -> str:
    lines = [f"{n} coupled segments", "V1 in 0 PULSE(0 48 10n 1n 1n 200n 400n)"]
    node = "in"
    for i in range(n):
        nxt = f"n{i + 1}"
        mid = f"m{i + 1}"
        lines.append(f"R{i + 1} {node} {mid} {0.2 / n:.6e}")
        lines.append(f"L{i + 1} {mid} {nxt} {5e-9 / n:.6e}")
        node = nxt
    lines.append(f"C1 {node} 0 500p")
    kk = 0
    for i in range(n):
        for j in range(i + 1, n):
            kk += 1
            k = 0.4 / (1 + abs(i - j))
            lines.append(f"K{kk} L{i + 1} L{j + 1} {k:.6e}")
    lines += [".tran 0.1n 400n 0 0.1n", ".end", ""]
    return "\n".join(lines)


DEMO_CIR = Path(__file__).resolve().parent.parent / "fixtures" / "demo" / "buck.cir"


def demo_augmented() -> str:
    """The demo's augmented netlist, as `parasite augment` writes it."""
    from parasite.augment import augment_files

    return augment_files(str(DEMO_CIR), str(DEMO_CIR.with_name("buck.routes.toml"))).netlist_bytes.decode()


def run_batch(deck: str) -> dict[str, np.ndarray]:
    result = run_ngspice(deck)
    return dict(result.last.vectors)


class _Shared:
    def __init__(self) -> None:
        from PySpice.Spice.NgSpice.Shared import NgSpiceShared

        logging.getLogger("PySpice").setLevel(logging.ERROR)
        self.ng = NgSpiceShared.new_instance()

    def run(self, deck: str) -> dict[str, np.ndarray]:
        ng = self.ng
        ng.destroy()
        ng.load_circuit(deck)
        ng.run()
        plot = ng.plot(None, ng.last_plot)
        out = {name: np.asarray(vec.to_waveform()) for name, vec in plot.items()}
        return out


def median_time(fn, repeat: int) -> tuple[float, dict[str, np.ndarray]]:
    times = []
    out: dict[str, np.ndarray] = {}
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    shared = _Shared()
    cases = [("ring", ring_deck()), ("coupled-20", coupled_deck(20)), ("coupled-60", coupled_deck(60)),
             ("demo, original", DEMO_CIR.read_text()), ("demo, augmented", demo_augmented())]
    print("| circuit | time points | batch (subprocess) | shared library (PySpice) | same waveform |")
    print("|---|---|---|---|---|")
    for label, deck in cases:
        tb, vb = median_time(lambda d=deck: run_batch(d), args.repeat)
        ts, vs = median_time(lambda d=deck: shared.run(d), args.repeat)
        tb_key = "time"
        npts = len(vb[tb_key])
        vnode = ("v(b)" if "v(b)" in vb else "v(sw)" if "v(sw)" in vb
                 else [k for k in vb if k.startswith("v(")][-1])
        snode = vnode[2:-1] if vnode[2:-1] in vs else vnode
        same = (
            len(vs.get("time", [])) == npts
            and snode in vs
            and float(np.max(np.abs(vs[snode] - vb[vnode]))) == 0.0
        )
        verdict = "bit-identical" if same else "differs"
        print(f"| {label} | {npts:,} | {tb * 1e3:.0f} ms | {ts * 1e3:.0f} ms | {verdict} |")


if __name__ == "__main__":
    main()
