"""A meshed pour through ``augment`` stage by stage, and its reduced netlist in ngspice.

The board is the fixture fixtures/routes/pour_plane (invented: a 20 mm trace over a
24 x 10 mm ground pour) with the pour's cell size set by ``--cell`` (0.3 mm gives
7,944 segments, 3,906 independent meshes). The netlist is the fixture's with the
load made to ring: the 10 ohm load becomes 1 kohm with 100 pF across it (added
here, invented), so the loop inductance and that capacitor ring after the edge.

Printed (markdown rows for benchmarks/RESULTS.md), all measured in this run:

* wall time of each stage of ``augment`` (read + graph, extraction, network with
  the threshold search, loops and report, reduction, netlist);
* the floor: one dense LU factorisation (scipy.linalg.lu_factor) of a real and of a
  complex matrix the size of the mesh matrix (independent meshes), the O(N^3)
  step that any exact port solve of the full network needs at least once per
  frequency;
* ngspice time of the ideal netlist and of the reduced netlist (median of
  ``--repeat`` runs), and the ring frequency of the source current in each
  (zero crossings about its mean after the edge);
  with ``--full-cell`` the full model (every branch, couplings per board) of a
  coarser board is simulated too, to show why the full model of the fine board
  is not run (its coupling statements number in the millions).
"""

from __future__ import annotations

import argparse
import math
import re
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import scipy.linalg as sla

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from parasite.augment import analyse  # noqa: E402
from parasite.errors import SimulationError  # noqa: E402
from parasite.network import NetworkOptions, build_network  # noqa: E402
from parasite.network.reduce_choice import choose_model, reduction_report  # noqa: E402
from parasite.pipeline import extract, load_inputs  # noqa: E402
from parasite.report import set_written_summary  # noqa: E402
from parasite.spice import run_ngspice  # noqa: E402
from parasite.writer import write_netlist  # noqa: E402

FIX = ROOT / "fixtures" / "routes"


def board(tmp: Path, cell: float) -> tuple[Path, Path]:
    """The pour fixture at ``cell`` mm, with a ringing load (see the module docstring)."""
    routes = (FIX / "pour_plane.routes.toml").read_text()
    routes = re.sub(r"(?m)^cell = 3\.0$", f"cell = {cell:g}", routes)
    cir = (FIX / "pour_plane.cir").read_text()
    cir = cir.replace("R1 vin 0 10", "R1 vin 0 1k\nC1 vin 0 100p")
    cir = cir.replace("PULSE(0 5 1n 0.5n 0.5n 10n 40n)", "PULSE(0 5 1n 0.5n 0.5n 100n 200n)")
    cir = cir.replace(".tran 0.2n 4n", ".tran 0.02n 60n 0 0.02n")
    cir = cir.replace(".print tran i(v1)", ".print tran i(v1)")
    r, c = tmp / f"p{cell:g}.routes.toml", tmp / "p.cir"
    r.write_text(routes)
    c.write_text(cir)
    return c, r


def stages(cir: Path, routes: Path, model: str) -> tuple[dict[str, float], bytes, dict]:
    t, out = time.perf_counter(), {}
    inputs = load_inputs(str(cir), str(routes))
    out["read + graph"] = time.perf_counter() - t
    t = time.perf_counter()
    extraction = extract(inputs)
    out["extraction"] = time.perf_counter() - t
    t = time.perf_counter()
    network = build_network(extraction, NetworkOptions())
    out["network (branches)"] = time.perf_counter() - t
    t = time.perf_counter()
    chosen, red, why = choose_model(network, model)
    out["reduction"] = time.perf_counter() - t
    t = time.perf_counter()
    report = analyse(network)
    report["model"] = reduction_report(chosen, red, why)
    set_written_summary(report, network, red if chosen == "reduced" else None)
    out["loops + report (the full model's threshold search if it is written)"] = (
        time.perf_counter() - t)
    t = time.perf_counter()
    written = write_netlist(network, None, red if chosen == "reduced" else None)
    out["netlist"] = time.perf_counter() - t
    out["segments"] = len(inputs.graph.segments)
    out["meshes"] = report["model"].get("full_order", 0)
    return out, written.netlist_bytes, report


def floor(n: int) -> tuple[float, float]:
    rng = np.random.default_rng(0)
    a = rng.standard_normal((n, n)) + n * np.eye(n)
    sla.lu_factor(a[:8, :8] + 0j)  # load the library before timing
    t = time.perf_counter()
    sla.lu_factor(a, check_finite=False)
    real = time.perf_counter() - t
    t = time.perf_counter()
    sla.lu_factor(a + 1j * a.T, check_finite=False)
    return real, time.perf_counter() - t


def simulate(deck: bytes, base: Path, repeat: int, timeout: float) -> tuple[float, float | None]:
    """Median ngspice time (s) and ring frequency (Hz); ``(inf, None)`` past ``timeout``."""
    times, sim = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        try:
            sim = run_ngspice(deck, base_dir=base, timeout=timeout)
        except SimulationError:
            return math.inf, None
        times.append(time.perf_counter() - t)
    # the source current is the ring itself (the source drives the loop and the
    # capacitor): its frequency from the zero crossings about its mean after the edge
    t, i = np.asarray(sim.scale), np.asarray(sim.vector("i(v1)"))
    after = t > 2e-9
    x = i[after] - np.mean(i[after])
    if np.ptp(x) <= 1e-6 * max(np.max(np.abs(i)), 1e-30):
        return statistics.median(times), None  # no ring (the ideal circuit)
    k = np.flatnonzero(np.signbit(x[:-1]) != np.signbit(x[1:]))
    ta = t[after]
    tc = ta[k] - x[k] * (ta[k + 1] - ta[k]) / (x[k + 1] - x[k])
    f = (len(tc) - 1) / (2.0 * (tc[-1] - tc[0])) if len(tc) > 2 else None
    return statistics.median(times), f


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cell", type=float, default=0.3, help="pour cell size, mm")
    ap.add_argument("--full-cell", type=float, default=3.0,
                    help="cell (mm) of the smaller board whose full model is simulated")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--full-timeout", type=float, default=300.0,
                    help="s; the full model's ngspice run is stopped after this")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        cir, routes = board(tmp, args.cell)
        st, deck, report = stages(cir, routes, "auto")
        total = sum(v for k, v in st.items() if k not in ("segments", "meshes"))
        m = report["model"]
        print(f"board: cell {args.cell:g} mm, {st['segments']} segments, {st['meshes']} "
              f"independent meshes; written: {m['written']} ({m['rule']}); order {m.get('order')}, "
              f"ports {m.get('ports')}, max error as written {m.get('max_error_as_written')}")
        fr, fc = floor(int(st["meshes"]) or 1)
        print("| stage | wall time | vs one complex dense LU of the mesh matrix |")
        print("|---|---|---|")
        for k, v in st.items():
            if k not in ("segments", "meshes"):
                print(f"| {k} | {v:.2f} s | {v / fc:.1f} |")
        print(f"| augment, total | {total:.2f} s | {total / fc:.1f} |")
        print(f"| floor: dense LU, real {int(st['meshes'])}^2 | {fr:.2f} s | {fr / fc:.2f} |")
        print(f"| floor: dense LU, complex {int(st['meshes'])}^2 | {fc:.2f} s | 1.0 |")
        (tmp / "reduced.cir").write_bytes(deck)
        ti, fi = simulate(cir.read_bytes(), tmp, args.repeat, 600)
        tr, frd = simulate(deck, tmp, args.repeat, 600)
        print("| netlist | ngspice time | vs ideal | ring frequency |")
        print("|---|---|---|---|")
        print(f"| ideal | {ti:.2f} s | 1.00 | - (no copper: no ring) |")
        print(f"| reduced, cell {args.cell:g} mm | {tr:.2f} s | {tr / ti:.2f} | {frd or 0:.6g} Hz |",
              flush=True)
        for cell in (args.full_cell,):
            c2, r2 = board(tmp, cell)
            for model in ("full", "reduced"):
                _, deck2, rep2 = stages(c2, r2, model)
                t2, f2 = simulate(deck2, tmp, 1, args.full_timeout)
                took = (f"{t2:.2f} s | {t2 / ti:.2f}" if math.isfinite(t2)
                        else f"not finished in {args.full_timeout:g} s | -")
                print(f"| {model}, cell {cell:g} mm ({rep2['summary']['segments']} segments, "
                      f"{rep2['summary']['couplings_written']} coupling statements) | "
                      f"{took} | {f2 or 0:.6g} Hz |", flush=True)


if __name__ == "__main__":
    main()
