"""Run every benchmark script in this folder, one after the other, in fresh
processes (so that peak-memory figures are per script)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main() -> int:
    failed = 0
    for script in sorted(HERE.glob("bench_*.py")):
        print(f"== {script.name}", flush=True)
        failed += subprocess.run([sys.executable, str(script)], cwd=HERE.parent).returncode != 0
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
