"""Run ngspice in batch mode as a subprocess and read its raw file.

Why a subprocess and not PySpice's shared-library interface: measured with
``benchmarks/bench_spice.py`` (``benchmarks/RESULTS.md``; median of 3 runs,
4,026 time points, every vector read into numpy), batch mode took 21 ms,
179 ms and 5.06 s on a single RLC loop, 20 and 60 fully coupled segments,
against 16 ms, 146 ms and 5.50 s in shared-library mode, with bit-identical
waveforms: the shared library saves about 5 ms of process start and nothing
once the matrix work dominates. Batch mode was chosen because a
segmentation fault of ngspice (which some malformed coupling statements cause)
ends only the child process, where in shared-library mode it ends Python; a
hung run can be killed on a timeout; and only the ``ngspice`` program is
needed, not the ``libngspice`` development symlink.

ngspice often exits with code 0 after real trouble (a coupling matrix that is
not positive definite, for one), so the log is read as well: the run fails when
it contains one of :data:`FAILURE_PATTERNS`.
"""

from __future__ import annotations

import os
import re
import shutil
import signal
import subprocess
import tempfile
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from parasite.errors import SimulationError
from parasite.spice.raw import Plot, read_raw_bytes

#: Log lines (regular expressions, case-insensitive) that make a run fail even
#: when ngspice exits with code 0. Each was seen in ngspice 39 output.
FAILURE_PATTERNS: tuple[str, ...] = (
    r"not positive definite",  # coupled inductors: |k| > 1 or an indefinite matrix
    r"timestep too small",  # transient or operating point did not converge
    r"^\s*error\b",  # "Error on line 5 ...", "Error: unknown subckt ..."
    r"\bfatal\b",  # "Fatal error: k1: coupling to non-existant inductor l9."
    r"simulation\(s\) aborted",
    r"simulation interrupted",
    r"there aren't any circuits loaded",
)

#: Log lines that are reported in :attr:`SimulationResult.warnings` besides
#: those that contain the word "warning".
ADVISORY_PATTERNS: tuple[str, ...] = (
    r"incomplete set of k couplings",
    r"duplicate k instances",
)

_FAIL_RE = re.compile("|".join(f"(?:{p})" for p in FAILURE_PATTERNS), re.IGNORECASE)
_WARN_RE = re.compile(
    "|".join([r"warning"] + [f"(?:{p})" for p in ADVISORY_PATTERNS]), re.IGNORECASE
)


@dataclass
class SimulationResult:
    """What one ngspice run produced.

    ``plots`` holds one :class:`~parasite.spice.raw.Plot` per analysis, in the
    order of the raw file; ``log`` is ngspice's log and standard error;
    ``warnings`` the log lines that contain "warning" (any case) or report an
    incomplete or duplicated set of coupling statements; ``elapsed`` the wall
    time of the run in seconds.
    """

    plots: list[Plot]
    log: str
    warnings: list[str] = field(default_factory=list)
    elapsed: float = 0.0

    @property
    def last(self) -> Plot:
        if not self.plots:
            raise SimulationError("ngspice wrote no waveforms")
        return self.plots[-1]

    def plot(self, name: str) -> Plot:
        """The last plot whose name contains ``name`` (case-insensitive),
        e.g. ``"transient"``, ``"ac"``."""
        for p in reversed(self.plots):
            if name.lower() in p.name.lower():
                return p
        raise KeyError(
            f"no plot named like {name!r}; there are: " + ", ".join(p.name for p in self.plots)
        )

    def vector(self, name: str) -> np.ndarray:
        """A vector of the last plot: ``v(sw)`` or ``sw`` for a node voltage,
        ``i(vin)`` or ``vin#branch`` for a branch current (case-insensitive)."""
        return self.last.vector(name)

    @property
    def scale(self) -> np.ndarray:
        """The last plot's scale: time in s, or frequency in Hz."""
        return self.last.scale


def ngspice_executable() -> str | None:
    """The ngspice program: ``$PARASITE_NGSPICE`` if set, else ``ngspice`` on PATH."""
    env = os.environ.get("PARASITE_NGSPICE")
    if env:
        return env
    return shutil.which("ngspice")


def run_ngspice(
    deck: bytes | str,
    *,
    base_dir: str | Path | None = None,
    timeout: float = 300.0,
    name: str = "<deck>",
    progress: Callable[[float], None] | None = None,
    poll_interval: float = 0.5,
) -> SimulationResult:
    """Run ``deck`` with ``ngspice -b -o run.log -r out.raw deck.cir``.

    The deck is written unchanged to a temporary folder; ngspice runs with
    ``base_dir`` (or else that folder) as its working directory, so relative
    ``.include`` paths resolve against ``base_dir``. The deck needs its own
    analysis card; without ``.save`` every node voltage and branch current is
    written. ``timeout`` in seconds: the run is killed after it. ``progress``,
    if given, is called now and then with the scale value (seconds, for a
    transient) of the latest point written. ``name`` names the deck in errors.

    Raises :class:`~parasite.errors.SimulationError` quoting ngspice's own
    error lines when ngspice exits non-zero, is killed, or logs one of
    :data:`FAILURE_PATTERNS`.
    """
    exe = ngspice_executable()
    if exe is None:
        raise SimulationError(
            "ngspice was not found on PATH (install the 'ngspice' package, or set "
            "PARASITE_NGSPICE to the program)",
            file=name,
        )
    data = deck.encode("utf-8") if isinstance(deck, str) else bytes(deck)
    with tempfile.TemporaryDirectory(prefix="parasite-ngspice-") as tmp:
        folder = Path(tmp)
        deck_path = folder / "deck.cir"
        log_path = folder / "run.log"
        raw_path = folder / "out.raw"
        deck_path.write_bytes(data)
        cwd = Path(base_dir) if base_dir is not None else folder
        if not cwd.is_dir():
            raise SimulationError(f"the folder {str(cwd)!r} does not exist", file=name)
        cmd = [exe, "-b", "-o", str(log_path), "-r", str(raw_path), str(deck_path)]
        start = time.monotonic()
        try:
            proc = subprocess.Popen(
                cmd,
                cwd=str(cwd),
                stdin=subprocess.DEVNULL,
                stdout=subprocess.PIPE,
                stderr=subprocess.PIPE,
                start_new_session=True,
            )
        except OSError as exc:
            raise SimulationError(f"cannot start ngspice ({exe}): {exc.strerror}", file=name) from exc
        stdout, stderr, code = _wait(proc, timeout, name, raw_path, progress, poll_interval)
        elapsed = time.monotonic() - start
        log = _read_text(log_path)
        err_text = stderr.decode("utf-8", "replace")
        if err_text.strip():
            log = log + ("\n" if log and not log.endswith("\n") else "") + err_text
        _check(log, code, name, stdout.decode("utf-8", "replace"))
        if not raw_path.exists():
            raise SimulationError(
                "ngspice wrote no waveforms: does the deck have an analysis card "
                "(.tran, .ac, .dc, .op)?",
                file=name,
            )
        plots = read_raw_bytes(raw_path.read_bytes(), name=f"{name} (raw file)")
    if not plots:
        raise SimulationError(
            "ngspice wrote no waveforms: does the deck have an analysis card "
            "(.tran, .ac, .dc, .op)?",
            file=name,
        )
    warnings = [line.strip() for line in log.splitlines() if _WARN_RE.search(line)]
    return SimulationResult(plots=plots, log=log, warnings=warnings, elapsed=elapsed)


def _wait(
    proc: subprocess.Popen[bytes],
    timeout: float,
    name: str,
    raw_path: Path,
    progress: Callable[[float], None] | None,
    poll_interval: float,
) -> tuple[bytes, bytes, int]:
    deadline = time.monotonic() + timeout
    tracker = _RawProgress(raw_path) if progress is not None else None
    while True:
        remaining = deadline - time.monotonic()
        step = remaining if tracker is None else min(poll_interval, remaining)
        try:
            stdout, stderr = proc.communicate(timeout=max(step, 0.0))
            return stdout, stderr, proc.returncode
        except subprocess.TimeoutExpired:
            if time.monotonic() >= deadline:
                _kill(proc)
                raise SimulationError(
                    f"ngspice did not finish within {timeout:g} s and was stopped "
                    "(raise the time limit, or shorten the simulation)",
                    file=name,
                ) from None
            if tracker is not None and progress is not None:
                value = tracker.latest()
                if value is not None:
                    progress(value)


def _kill(proc: subprocess.Popen[bytes]) -> None:
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        proc.kill()
    proc.communicate()


class _RawProgress:
    """Reads the scale value of the last row written so far to a binary raw file
    (ngspice writes rows as it goes, and the point count at the end)."""

    def __init__(self, path: Path) -> None:
        self.path = path
        self.offset: int | None = None
        self.row = 0

    def latest(self) -> float | None:
        try:
            size = self.path.stat().st_size
            if self.offset is None:
                with self.path.open("rb") as fh:
                    head = fh.read(65536)
                mark = head.find(b"Binary:\n")
                if mark < 0:
                    return None
                m = re.search(rb"No\. Variables:\s*(\d+)", head)
                if m is None:
                    return None
                width = 16 if re.search(rb"Flags:\s*complex", head[:mark]) else 8
                self.row = int(m.group(1)) * width
                self.offset = mark + len(b"Binary:\n")
            rows = (size - self.offset) // self.row if self.row else 0
            if rows <= 0:
                return None
            with self.path.open("rb") as fh:
                fh.seek(self.offset + (rows - 1) * self.row)
                value = np.frombuffer(fh.read(8), dtype="<f8")
            return float(value[0]) if value.size else None
        except OSError:
            return None


def _read_text(path: Path) -> str:
    try:
        return path.read_bytes().decode("utf-8", "replace")
    except OSError:
        return ""


def _check(log: str, code: int, name: str, stdout: str) -> None:
    quoted = error_lines(log)
    if code == 0 and not quoted:
        return
    if code < 0:
        try:
            sig = signal.Signals(-code).name
        except ValueError:
            sig = f"signal {-code}"
        head = f"ngspice crashed ({sig})"
    elif code != 0:
        head = f"ngspice failed (exit code {code})"
    else:
        head = "ngspice reported a failure"
    if not quoted:
        tail = [ln for ln in (log or stdout).splitlines() if ln.strip()][-6:]
        quoted = tail
    body = "\n".join("  " + ln.rstrip() for ln in quoted)
    raise SimulationError(f"{head}; ngspice says:\n{body}" if body else head, file=name)


def error_lines(log: str, limit: int = 24) -> list[str]:
    """The lines of an ngspice log that report a failure, each with the lines
    ngspice prints around it (the offending card after "Error on line N",
    the inductors and couplings of a "not positive definite" system)."""
    lines = log.splitlines()
    blocks: list[tuple[int, int]] = []
    for i, line in enumerate(lines):
        if not _FAIL_RE.search(line):
            continue
        start = i
        for j in range(i - 1, max(i - 6, -1), -1):
            if "inductive system consisting of" in lines[j].lower():
                start = j
                break
        end = i + 1
        if re.search(r"error on line", line, re.IGNORECASE):
            # the card, then the reason (indented or not)
            while end < len(lines) and end - i <= 2 and lines[end].strip():
                end += 1
        while end < len(lines) and end - i <= 4 and lines[end][:1] in (" ", "\t") and lines[end].strip():
            end += 1
        if blocks and start <= blocks[-1][1]:
            blocks[-1] = (blocks[-1][0], max(end, blocks[-1][1]))
        else:
            blocks.append((start, end))
    out: list[str] = []
    for a, b in blocks:
        out.extend(ln.rstrip() for ln in lines[a:b])
    if len(out) > limit:
        out = out[:limit] + [f"... ({len(out) - limit} more lines in the log)"]
    return out
