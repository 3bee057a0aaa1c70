"""Helpers for the netlist tests: running the real ngspice, reading its raw
files and its expanded listing, and SPICE numbers. The few tests here check the
helpers themselves against ngspice and the manual.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

FIXTURES = Path(__file__).resolve().parents[2] / "fixtures" / "netlists"
DEMO = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
NGSPICE = shutil.which("ngspice")

needs_ngspice = pytest.mark.skipif(NGSPICE is None, reason="ngspice is not installed")

# Lines of an ngspice log that mean the run went wrong. ngspice's exit code is
# often 0 after real trouble (shared/notes/ngspice-facts.md), so the log is read.
LOG_FAILURE = re.compile(
    r"error|fatal|can't find|cannot|not found|unknown|interrupted|timestep too small|"
    r"singular matrix|not positive definite|aborted",
    re.IGNORECASE,
)
# ngspice 39 says these and still runs as intended.
LOG_HARMLESS = re.compile(
    r"comments and warnings go to log-file|unusual leading characters|"
    r"check line no|will be replaced with",
    re.IGNORECASE,
)


@dataclass
class Run:
    returncode: int
    log: str
    stdout: str
    plots: list[dict[str, np.ndarray]]

    def failures(self) -> list[str]:
        text = self.log + "\n" + self.stdout
        return [
            line.strip()
            for line in text.splitlines()
            if LOG_FAILURE.search(line) and not LOG_HARMLESS.search(line)
        ]


def read_raw(data: bytes) -> list[dict[str, np.ndarray]]:
    """Every plot of an ngspice binary raw file (header text, then little-endian
    float64 rows; complex plots hold two numbers per value)."""
    plots: list[dict[str, np.ndarray]] = []
    pos = 0
    while pos < len(data):
        mark = data.find(b"Binary:\n", pos)
        if mark < 0:
            break
        header = data[pos:mark].decode("latin-1").splitlines()
        fields = {}
        for line in header:
            if ":" in line and not line.startswith("\t"):
                key, _, value = line.partition(":")
                fields[key.strip()] = value.strip()
        nvar = int(fields["No. Variables"])
        npts = int(fields["No. Points"])
        complex_ = "complex" in fields.get("Flags", "")
        start = header.index("Variables:") + 1
        names = [header[start + k].split()[1].lower() for k in range(nvar)]
        width = 2 if complex_ else 1
        size = 8 * nvar * npts * width
        values = np.frombuffer(data[mark + 8 : mark + 8 + size], dtype="<f8")
        values = values.reshape(npts, nvar * width)
        if complex_:
            values = values[:, 0::2] + 1j * values[:, 1::2]
        plots.append({name: values[:, k] for k, name in enumerate(names)})
        pos = mark + 8 + size
    return plots


def run_deck(deck: bytes, workdir: Path, tmp: Path, timeout: float = 120.0) -> Run:
    """``ngspice -b -o LOG -r RAW DECK`` run in a copy of ``workdir`` (so that
    relative includes resolve as for a netlist kept in ``workdir``, and files
    that models write, such as BSIM check logs, stay out of the source tree)."""
    assert NGSPICE is not None
    if tmp.resolve() not in workdir.resolve().parents and workdir.resolve() != tmp.resolve():
        copy = tmp / "work"
        if not copy.exists():
            shutil.copytree(workdir, copy)
        workdir = copy
    deck_path = tmp / "deck.cir"
    raw_path = tmp / "out.raw"
    log_path = tmp / "run.log"
    for p in (raw_path, log_path):
        if p.exists():
            p.unlink()
    deck_path.write_bytes(deck)
    proc = subprocess.run(
        [NGSPICE, "-b", "-o", str(log_path), "-r", str(raw_path), str(deck_path)],
        cwd=workdir,
        capture_output=True,
        timeout=timeout,
        stdin=subprocess.DEVNULL,
    )
    log = log_path.read_text("latin-1") if log_path.exists() else ""
    plots = read_raw(raw_path.read_bytes()) if raw_path.exists() else []
    return Run(proc.returncode, log, proc.stdout.decode("latin-1"), plots)


def insert_after_title(deck: bytes, text: str) -> bytes:
    """``text`` (LF lines) inserted after the title line, with the deck's line ends."""
    first, sep, rest = deck.partition(b"\n")
    eol = "\r\n" if first.endswith(b"\r") else "\n"
    return first + sep + text.replace("\n", eol).encode() + rest


def listing(deck: bytes, workdir: Path, tmp: Path) -> list[str]:
    """ngspice's own reading of a deck: the lines of ``listing e`` (comments
    removed, continuations joined, lower case), without the title."""
    probe = insert_after_title(deck, ".control\nlisting e\nquit\n.endc\n")
    run = run_deck(probe, workdir, tmp)
    text = run.log + "\n" + run.stdout
    lines = [m.group(1) for m in re.finditer(r"^\s+\d+ : (.*)$", text, re.MULTILINE)]
    return lines[1:]


_SUFFIX = {"t": 1e12, "g": 1e9, "meg": 1e6, "k": 1e3, "mil": 25.4e-6, "m": 1e-3,
           "u": 1e-6, "n": 1e-9, "p": 1e-12, "f": 1e-15}
_NUMBER = re.compile(r"([-+]?(?:\d+\.?\d*|\.\d+)(?:e[-+]?\d+)?)([a-z]*)", re.IGNORECASE)


def spice_number(text: str) -> float:
    """A SPICE number with its scale suffix (ngspice 39 manual, 2.3: T G Meg K
    mil m u n p f; letters after the suffix are ignored; M is milli)."""
    m = _NUMBER.fullmatch(text.strip())
    if m is None:
        raise ValueError(f"not a SPICE number: {text!r}")
    value = float(m.group(1))
    letters = m.group(2).lower()
    for suffix in ("meg", "mil", "t", "g", "k", "m", "u", "n", "p", "f"):
        if letters.startswith(suffix):
            return value * _SUFFIX[suffix]
    return value


def test_spice_number_reads_the_manual_suffixes() -> None:
    """ngspice 39 manual, 2.3 (scale factors): 1meg = 1e6, 1M = 1e-3, 5nH = 5e-9."""
    assert spice_number("1meg") == 1e6
    assert spice_number("1M") == pytest.approx(1e-3)
    assert spice_number("5nH") == pytest.approx(5e-9)
    assert spice_number("2.2k") == pytest.approx(2200.0)
    assert spice_number("1e3") == 1000.0
    assert spice_number("10mil") == pytest.approx(254e-6)


@needs_ngspice
@pytest.mark.ngspice
def test_raw_reader_reads_an_operating_point(tmp_path: Path) -> None:
    """A 10 V source across 1k + 4k: v(mid) = 8 V, i(v1) = -2 mA (Ohm's law;
    SPICE counts the current into the source's + terminal)."""
    deck = b"divider\nV1 in 0 10\nR1 in mid 1k\nR2 mid 0 4k\n.op\n.end\n"
    run = run_deck(deck, tmp_path, tmp_path)
    assert run.returncode == 0 and run.failures() == []
    (plot,) = run.plots
    assert plot["v(mid)"][0] == pytest.approx(8.0)
    assert plot["i(v1)"][0] == pytest.approx(-2e-3)
