"""How fast a huge or hostile input is refused (issue 19).

A routes file of a million points (JSON, about 20 MB) must be refused within
a second, with a message, before it is parsed; the floor is the time to read
the file's bytes (what any refusal costs at least). Also timed: a trace at the
per-entry point limit plus one, which is refused after parsing. Printed as a
markdown table for benchmarks/RESULTS.md. Files go to a temporary folder.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from geometry.errors import RoutesError  # noqa: E402
from geometry.limits import MAX_POINTS_PER_ENTRY  # noqa: E402
from geometry.routes import load_routes  # noqa: E402


def _routes(n: int) -> str:
    pts = [[i * 1e-3, 0.0] for i in range(n)]
    return json.dumps({"format": "parasite-routes/1", "units": "mm",
                       "layers": {"top": {"z": 1.565, "thickness": 0.035}},
                       "trace": [{"net": "a", "layer": "top", "width": 0.5, "points": pts}]})


def _time_refusal(path: Path) -> tuple[float, float, str]:
    t0 = time.perf_counter()
    path.read_bytes()
    floor = time.perf_counter() - t0
    t0 = time.perf_counter()
    try:
        load_routes(path)
    except RoutesError as exc:
        msg = str(exc)
    else:
        raise SystemExit(f"{path.name} was accepted")
    return time.perf_counter() - t0, floor, msg


def main() -> None:
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in (1_000_000, MAX_POINTS_PER_ENTRY + 1):
            p = Path(tmp) / f"p{n}.routes.json"
            p.write_text(_routes(n))
            t, floor, msg = _time_refusal(p)
            rows.append((n, p.stat().st_size, t, floor, msg))
        # the whole command, as a makefile runs it (process start included)
        (Path(tmp) / "b.cir").write_text("t\nV1 a 0 1\nR1 a 0 1\n.end\n")
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "parasite", "augment", "b.cir",
                               "p1000000.routes.json", "-o", "o.cir", "-q"], cwd=tmp,
                              capture_output=True, text=True, timeout=120)
        cli = time.perf_counter() - t0
    print("| points | file bytes | refused in (s) | read floor (s) | ratio | message |")
    print("|---|---|---|---|---|---|")
    for n, size, t, floor, msg in rows:
        print(f"| {n} | {size} | {t:.3f} | {floor:.3f} | {t / floor:.1f} | {msg[:70]} |")
    print(f"\n`parasite augment` on the million-point file: exit {proc.returncode} in {cli:.2f} s "
          f"(process start included)")


if __name__ == "__main__":
    main()
