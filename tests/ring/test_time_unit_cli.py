"""``parasite ring --measured`` with the time unit in the column name, or given
with ``--time-unit``, end to end with the real ngspice.

The demo's invented measurement (fixtures/demo/buck.measured.csv, header
``Time (s),CH1 (V)``) is rewritten with its times in nanoseconds under other
headers. The reference is the same file as written: the same samples must
give the same measured ring frequency within 0.1 % (the issue's tolerance);
read as seconds, a nanosecond file would ring 10^9 times too slowly.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from parasite.cli import main

pytestmark = pytest.mark.ngspice

DEMO = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
MEASURED = DEMO / "buck.measured.csv"


def _ring(measured: Path, out: Path, *extra: str) -> tuple[int, str]:
    args = ["ring", str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml"), "--node", "sw",
            "--measured", str(measured), "--format", "json", "-o", str(out), "--quiet", *extra]
    result = CliRunner().invoke(main, args, catch_exceptions=False)
    return result.exit_code, result.stderr


def _frequencies(path: Path) -> list[float]:
    report = json.loads(path.read_text())
    return [e["frequency"] for e in report["measured"]["edges"]]


def _in_nanoseconds(target: Path, names: str) -> Path:
    """The demo measurement with times in ns under the column names ``names``."""
    lines = MEASURED.read_text().splitlines()
    k = lines.index("Time (s),CH1 (V)")
    rows = []
    for line in lines[k + 1 :]:
        t, v = line.split(",")
        rows.append(f"{float(t) * 1e9:.6f},{v}")
    target.write_text("\n".join([*lines[:k], names, *rows]) + "\n")
    return target


@pytest.fixture(scope="module")
def reference(tmp_path_factory: pytest.TempPathFactory) -> list[float]:
    out = tmp_path_factory.mktemp("ring") / "as_written.json"
    code, err = _ring(MEASURED, out)
    assert code == 0, err
    found = _frequencies(out)
    assert len(found) == 2 and all(f > 1e6 for f in found)
    return found


def test_unit_suffix_in_the_column_name(tmp_path: Path, reference: list[float]) -> None:
    measured = _in_nanoseconds(tmp_path / "t_ns.csv", "t_ns,sw_V")
    out = tmp_path / "ring.json"
    code, err = _ring(measured, out)
    assert code == 0, err
    assert _frequencies(out) == pytest.approx(reference, rel=1e-3)


def test_missing_time_unit_is_asked_for_then_given(tmp_path: Path, reference: list[float]) -> None:
    measured = _in_nanoseconds(tmp_path / "bare.csv", "t,sw")
    out = tmp_path / "ring.json"
    code, err = _ring(measured, out)
    assert code == 1
    assert re.search(r"bare\.csv:\d+: error: the unit of the time column 't' .* --time-unit", err), err
    assert not out.exists()
    code, err = _ring(measured, out, "--time-unit", "ns")
    assert code == 0, err
    assert _frequencies(out) == pytest.approx(reference, rel=1e-3)
