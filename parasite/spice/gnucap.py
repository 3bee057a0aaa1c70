"""Run gnucap in batch mode as a subprocess and read the tables it prints.

What gnucap 0.36 (Debian ``gnucap 1:0.36~20171003``, "master 2017.10.03") does
with a deck given as ``gnucap -b deck.cir``, each seen in a run (details and
the differences from ngspice in ``docs/simulators.md``):

* it reads the file in SPICE mode: the first line is the title, ``*``
  comments, ``+`` continuation lines and CRLF line ends are read as ngspice
  reads them; ``;`` and ``$`` inline comments are not (a card with one makes
  gnucap stop reading, or drops the rest of the deck silently);
* it runs each dot command when it reads it: an analysis (``.op``, ``.ac``,
  ``.tran``, ``.dc``) simulates the elements read so far and prints the
  probes of the ``.print`` cards read before it; ``.end`` stops reading;
* results go to standard output as tables: a header line starting with ``#``
  (``#Freq``, ``#Time``; blank for ``.op``, whose first column is the
  temperature), then one row per point, numbers with SI suffixes
  (``1.Meg``, ``-390.63u``, ``27.``), 5 significant digits unless the deck
  sets ``.options numdgt=N``;
* trouble is echoed as the offending card followed by a ``^ ? message`` line,
  and the exit code stays 0. An unknown ``.options`` name (``what's this?``)
  and ``.ic``/``.nodeset`` (``no match``: not supported) are skipped and
  reading goes on; most other messages (``.save``: ``can't find``; a model
  type it does not have: ``no match``) end the run there, so the analyses
  after it never run.

So a run fails here when gnucap exits non-zero, is killed, prints a message
other than the skipped kinds above, or prints no table at all.
"""

from __future__ import annotations

import os
import re
import shutil
import signal
import subprocess
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from parasite.errors import SimulationError

_SUFFIX = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3, "K": 1e3, "Meg": 1e6,
           "G": 1e9, "T": 1e12}
_NUMBER = re.compile(r"([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)(Meg|[fpnumKGT])?\Z")
_MARK = re.compile(r"^\s*\^ \? ?(.*)$")
# Messages after which gnucap 0.36 keeps reading: (card keyword prefix, message pattern).
_SKIPPED = (
    (".opt", re.compile(r"what's this\?")),
    (".ic", re.compile(r"no match")),
    (".nodeset", re.compile(r"no match")),
)


@dataclass
class Table:
    """One table gnucap printed: ``columns`` maps each column's name as printed
    (``Time``, ``Freq``, ``temp`` for ``.op``, ``v(sw)``, ``vr(n)``, ...) to its
    values; the first column is the scale (s, Hz, or degrees Celsius)."""

    columns: dict[str, np.ndarray]

    @property
    def scale(self) -> np.ndarray:
        return next(iter(self.columns.values()))

    @property
    def kind(self) -> str:
        return next(iter(self.columns))

    def __getitem__(self, name: str) -> np.ndarray:
        want = name.lower()
        for key, values in self.columns.items():
            if key.lower() == want:
                return values
        raise KeyError(f"no column {name!r}; there are: {', '.join(self.columns)}")


@dataclass
class GnucapResult:
    """What one gnucap run printed: its tables in order, its whole output
    (``log``), the messages it skipped (``warnings``) and the wall time (s)."""

    tables: list[Table]
    log: str
    warnings: list[str] = field(default_factory=list)
    elapsed: float = 0.0

    def table(self, kind: str) -> Table:
        """The last table whose scale column is named ``kind`` (``Time``,
        ``Freq``, ``temp``; any case)."""
        for t in reversed(self.tables):
            if t.kind.lower() == kind.lower():
                return t
        raise KeyError(f"no {kind!r} table; there are: {', '.join(t.kind for t in self.tables)}")


def gnucap_executable() -> str | None:
    """The gnucap program: ``$PARASITE_GNUCAP`` if set, else ``gnucap`` on PATH."""
    return os.environ.get("PARASITE_GNUCAP") or shutil.which("gnucap")


def parse_number(text: str) -> float:
    """A number as gnucap prints it: ``1.Meg`` = 1e6, ``-390.63u``, ``27.``,
    ``1.5E-20``. Raises ValueError for anything else."""
    m = _NUMBER.match(text)
    if m is None:
        raise ValueError(f"not a gnucap number: {text!r}")
    return float(m.group(1)) * _SUFFIX.get(m.group(2) or "", 1.0)


def parse_output(text: str) -> tuple[list[Table], list[tuple[str, str]], list[str]]:
    """Read gnucap's standard output: its tables; its messages as (card echoed,
    message) pairs; and the other lines it printed after the banner and the
    title (notes such as "M1: missing args -- need model name")."""
    lines = text.splitlines()
    banner = max((i for i, ln in enumerate(lines) if ln.startswith("default plugins")), default=-1)
    lines = lines[banner + 2:]  # the banner, then the title echoed
    tables: list[Table] = []
    messages: list[tuple[str, str]] = []
    notes: list[str] = []
    header: list[str] | None = None
    rows: list[list[float]] = []

    def close() -> None:
        if header is not None and rows:
            data = np.array(rows, dtype=float)
            names = header if len(header) == data.shape[1] else ["temp", *header]
            if len(names) == data.shape[1]:
                tables.append(Table({n: data[:, k] for k, n in enumerate(names)}))

    for line in lines:
        mark = _MARK.match(line)
        if mark:
            card = notes.pop().strip() if notes else ""
            messages.append((card, mark.group(1).strip()))
            continue
        if line.startswith("#"):
            close()
            header, rows = line[1:].split(), []
            continue
        if header is not None and line[:1] == " " and line.split():
            try:
                rows.append([parse_number(f) for f in line.split()])
                continue
            except ValueError:
                pass
        if line.strip():  # a note; gnucap may print one between a table's rows
            notes.append(line)
    close()
    return tables, messages, notes


def _skipped(card: str, message: str) -> bool:
    word = card.split()[0].lower() if card.split() else ""
    return any(word.startswith(kw) and pat.search(message) for kw, pat in _SKIPPED)


def run_gnucap(deck: bytes | str, *, base_dir: str | Path | None = None, timeout: float = 300.0,
               name: str = "<deck>") -> GnucapResult:
    """Run ``deck`` with ``gnucap -b deck.cir`` and read the tables it prints.

    The deck is written unchanged to a temporary folder; gnucap runs with
    ``base_dir`` (or else that folder) as its working directory. The deck needs
    ``.print`` cards before its analysis cards (gnucap prints nothing else).
    ``timeout`` in seconds: the run is killed after it. Raises
    :class:`~parasite.errors.SimulationError` quoting gnucap's messages when it
    exits non-zero, is killed, prints a message that ends its reading, or
    prints no table.
    """
    exe = gnucap_executable()
    if exe is None:
        raise SimulationError("gnucap was not found on PATH (install the 'gnucap' package, or "
                              "set PARASITE_GNUCAP to the program)", file=name)
    data = deck.encode("utf-8") if isinstance(deck, str) else bytes(deck)
    with tempfile.TemporaryDirectory(prefix="parasite-gnucap-") as tmp:
        deck_path = Path(tmp) / "deck.cir"
        deck_path.write_bytes(data)
        cwd = Path(base_dir) if base_dir is not None else Path(tmp)
        if not cwd.is_dir():
            raise SimulationError(f"the folder {str(cwd)!r} does not exist", file=name)
        start = time.monotonic()
        try:
            proc = subprocess.Popen([exe, "-b", str(deck_path)], cwd=str(cwd),
                                    stdin=subprocess.DEVNULL, stdout=subprocess.PIPE,
                                    stderr=subprocess.STDOUT, start_new_session=True)
        except OSError as exc:
            raise SimulationError(f"cannot start gnucap ({exe}): {exc.strerror}", file=name) from exc
        try:
            out, _ = proc.communicate(timeout=timeout)
        except subprocess.TimeoutExpired:
            try:
                os.killpg(proc.pid, signal.SIGKILL)
            except (ProcessLookupError, PermissionError):
                proc.kill()
            proc.communicate()
            raise SimulationError(f"gnucap did not finish within {timeout:g} s and was stopped",
                                  file=name) from None
        elapsed = time.monotonic() - start
    log = out.decode("utf-8", "replace")
    tables, messages, notes = parse_output(log)
    fatal = [f"{card}\n    ^ {msg}" for card, msg in messages if not _skipped(card, msg)]
    warnings = [f"{card}: {msg}" for card, msg in messages if _skipped(card, msg)] + notes
    if proc.returncode != 0 or fatal:
        head = (f"gnucap failed (exit code {proc.returncode})" if proc.returncode != 0
                else "gnucap stopped reading the deck")
        tail = fatal or [ln for ln in log.splitlines() if ln.strip()][-6:]
        body = "\n".join("  " + ln for ln in tail)
        raise SimulationError(f"{head}; gnucap says:\n{body}", file=name)
    if not tables:
        said = "".join(f"\n  {ln}" for ln in notes[-6:])
        raise SimulationError("gnucap printed no results: does the deck have a .print card "
                              "before its analysis card (.op, .ac, .tran, .dc)?"
                              + (f" gnucap says:{said}" if said else ""), file=name)
    return GnucapResult(tables=tables, log=log, warnings=warnings, elapsed=elapsed)
