"""Reading oscilloscope waveform exports (CSV and the like) as they come.

Accepted, in any combination:

* separators: comma, semicolon, tab, or runs of spaces; with semicolon, tab or
  space separators a decimal comma (``1,5E-06``) is read as a decimal point;
* any number of header lines before the table (instrument settings, a title,
  ``key,value`` lines), and optionally a line of column names and a line of
  units;
* time in the first numeric column, then one or more channels; columns that
  are not numeric on every data line (settings printed beside the data) are
  left out;
* units in the column names (``Time (us)``, ``time(s)``, ``CH1[mV]``,
  ``Time [µs]``, ``t/ns``, ``Time/ns``, ``V in volts``, and as a suffix after
  ``_``: ``t_ns``, ``sw_V``, ``TIME_US``) or on a line of their own (``s,V``);
  SI prefixes are applied (a unit written all in capitals is read with a
  lower-case prefix: ``US`` is µs, ``MS`` ms, ``MV`` mV). A time column whose
  unit the file does not tell is an error that asks for the unit
  (``time_unit``, on the command line ``--time-unit``): a guess would be off
  by up to 10^12. A channel without a unit is taken as volts (and said in the
  warnings);
* a sample-number column instead of time, when the header gives the time of
  the first sample and the sampling interval (``Start``/``Increment``,
  ``Sample Interval``, ``XStart``/``dt`` ...);
* a time offset (the trigger at t = 0 or anywhere else): times are kept as
  they are;
* a UTF-8 byte-order mark, CRLF line ends, Latin-1 bytes in the header.

Anything else is refused with a message naming the file, the line and what
was expected (:class:`~parasite.errors.MeasurementError`).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from parasite.errors import MeasurementError
from parasite.ring.scope_units import TIME_UNITS
from parasite.ring.scope_units import looks_like_unit as _looks_like_unit
from parasite.ring.scope_units import name_and_unit as _name_and_unit
from parasite.ring.scope_units import time_scale as _time_scale
from parasite.ring.scope_units import value_scale as _value_scale

_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")
_DECIMAL_COMMA = re.compile(r"^[+-]?\d+,\d+([eE][+-]?\d+)?$")
_TIME_NAMES = {"time", "t", "x", "x-axis", "s", "second", "seconds", "sec", "zeit", "temps",
               "tiempo"}
_INDEX_NAMES = {"x", "sequence", "index", "no.", "no", "n", "sample", "samples", "point", "#"}
_START_KEYS = ("start", "xstart", "x start", "horizontal offset", "time offset", "t0",
               "first point", "trigger time", "x0")
_STEP_KEYS = ("increment", "sample interval", "xinc", "x increment", "dt", "time interval",
              "sampling interval", "interval", "delta t", "resolution")


@dataclass
class ScopeTrace:
    """A waveform file read into SI units: ``time`` in s, each channel in V (or
    A, by its unit). ``columns`` are the channel names in file order;
    ``warnings`` say what was assumed."""

    path: str
    time: np.ndarray
    channels: dict[str, np.ndarray]
    units: dict[str, str]
    header: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    first_data_line: int = 0

    def channel(self, name: str | None = None) -> tuple[str, np.ndarray]:
        """The channel called ``name`` (case-insensitive, or a 1-based number
        among the channels); with ``None``, the first one."""
        names = list(self.channels)
        if name is None:
            return names[0], self.channels[names[0]]
        for n in names:
            if n.lower() == name.strip().lower():
                return n, self.channels[n]
        if name.strip().isdecimal() and 1 <= int(name) <= len(names):
            n = names[int(name) - 1]
            return n, self.channels[n]
        raise MeasurementError(
            f"no channel {name!r}; the file has: " + ", ".join(names)
            + " (or give its number, 1 to " + str(len(names)) + ")",
            file=self.path,
        )


def read_scope_csv(path: str | Path, *, time_unit: str | None = None) -> ScopeTrace:
    """Read an oscilloscope export (see the module notes for what is accepted).
    ``time_unit`` (one of :data:`TIME_UNITS`) is the unit of the time column
    when the file does not say it; where the file says it, the two must agree."""
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise MeasurementError(f"cannot read the file: {exc.strerror}", file=str(p)) from exc
    return parse_scope_csv(data, name=str(p), time_unit=time_unit)


def _decode(data: bytes) -> str:
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def _split(line: str, sep: str | None) -> list[str]:
    if sep is None:
        return line.split()
    fields = [f.strip().strip('"').strip("'").strip() for f in line.split(sep)]
    while fields and fields[-1] == "":
        fields.pop()
    return fields


def _is_number(tok: str, decimal_comma: bool) -> bool:
    if decimal_comma:
        tok = tok.replace(",", ".")
    return bool(_NUMBER.match(tok))


def _to_float(tok: str, decimal_comma: bool) -> float:
    return float(tok.replace(",", ".") if decimal_comma else tok)


def _choose_separator(lines: list[str]) -> str | None:
    """The separator of the table at the end of the file: semicolon or tab when
    either splits every one of the last lines into the same number (at least
    two) of fields (commas are then decimal commas), else comma, else runs of
    spaces."""
    tail = [ln for ln in lines if ln.strip()][-40:]
    for sep in (";", "\t", ","):
        counts = {len(_split(ln, sep)) for ln in tail}
        if len(counts) == 1 and counts.pop() >= 2:
            return sep
    counts = {len(ln.split()) for ln in tail}
    if len(counts) == 1 and counts.pop() >= 2:
        return None
    # ragged lines (a cut-off last line): the separator found on every line
    for sep in (";", "\t", ","):
        if all(sep in ln for ln in tail[:-1]):
            return sep
    return None


def parse_scope_csv(data: bytes, *, name: str = "<csv>", time_unit: str | None = None) -> ScopeTrace:
    """Parse the bytes of an oscilloscope export; ``name`` is used in errors,
    ``time_unit`` as in :func:`read_scope_csv`."""
    if time_unit is not None and time_unit not in TIME_UNITS:
        raise MeasurementError(f"time unit {time_unit!r}: expected one of "
                               + ", ".join(TIME_UNITS), file=name)
    text = _decode(data)
    lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    if not any(ln.strip() for ln in lines):
        raise MeasurementError("the file is empty", file=name)
    sep = _choose_separator(lines)
    nonblank = [i for i, ln in enumerate(lines) if ln.strip()]
    tail = nonblank[-40:]
    decimal_comma = sep != "," and any(
        _DECIMAL_COMMA.match(tok) for i in tail for tok in _split(lines[i], sep)
    )
    # Columns numeric on nearly all of the last lines (a cut-off last line or
    # a stray bad value is then reported where it is, below).
    counts: dict[int, int] = {}
    for i in tail:
        fields = _split(lines[i], sep)
        for c, tok in enumerate(fields):
            if _is_number(tok, decimal_comma):
                counts[c] = counts.get(c, 0) + 1
    cols = sorted(c for c, n in counts.items() if n >= 0.8 * len(tail))
    if len(cols) < 2:
        last = lines[tail[-1]].strip()
        what = "no column of numbers" if not cols else "only one column of numbers"
        raise MeasurementError(
            f"{what} at the end of the file (last line {tail[-1] + 1}: {last[:60]!r}); expected "
            "a table with time and at least one channel, separated by commas, semicolons, "
            "tabs or spaces",
            file=name,
            line=tail[-1] + 1,
        )

    def parses(i: int) -> bool:
        f = _split(lines[i], sep)
        return all(c < len(f) and _is_number(f[c], decimal_comma) for c in cols)

    # The table starts at the first of five consecutive parsing lines.
    start = None
    for k in range(len(nonblank)):
        run = nonblank[k : k + 5]
        if len(run) == min(5, len(nonblank) - k) and all(parses(i) for i in run):
            start = k
            break
    if start is None:
        raise MeasurementError(
            "no run of five lines with a number in each of columns "
            + ", ".join(str(c + 1) for c in cols)
            + "; expected a table with time and at least one channel",
            file=name,
        )
    first = nonblank[start]
    header = [lines[i] for i in range(first)]
    rows: list[list[float]] = []
    for i in nonblank[start:]:
        f = _split(lines[i], sep)
        row: list[float] = []
        for c in cols:
            if c >= len(f) or f[c] == "":
                raise MeasurementError(
                    f"column {c + 1} is missing (the table has {max(cols) + 1} columns from "
                    f"line {first + 1} on): {lines[i].strip()[:60]!r}",
                    file=name,
                    line=i + 1,
                )
            if not _is_number(f[c], decimal_comma):
                raise MeasurementError(
                    f"column {c + 1}: {f[c][:30]!r} is not a number (the table of numbers "
                    f"starts at line {first + 1})",
                    file=name,
                    line=i + 1,
                )
            x = _to_float(f[c], decimal_comma)
            if not math.isfinite(x):
                raise MeasurementError(f"column {c + 1}: {f[c]!r} is not finite", file=name,
                                       line=i + 1)
            row.append(x)
        rows.append(row)
    table = np.array(rows, dtype=float)
    if table.shape[0] < 16:
        raise MeasurementError(
            f"only {table.shape[0]} samples from line {first + 1} on; a waveform needs at "
            "least 16",
            file=name,
            line=first + 1,
        )
    warnings: list[str] = []
    names, units = _column_names(header, sep, cols, decimal_comma)
    xname = names[0]
    time = table[:, 0]
    meta = _header_values(header, sep, decimal_comma)
    x_is_index = (
        xname.lower() in _INDEX_NAMES
        and np.allclose(np.diff(time), 1.0)
        and any(k in meta for k in _STEP_KEYS)
    )
    if x_is_index:
        step_key = next(k for k in _STEP_KEYS if k in meta)
        start_key = next((k for k in _START_KEYS if k in meta), None)
        t0 = meta[start_key][0] if start_key else 0.0
        dt = meta[step_key][0]
        t0 *= (_time_scale(meta[start_key][1]) or 1.0) if start_key else 1.0
        dt *= _time_scale(meta[step_key][1]) or 1.0
        time = t0 + dt * time
        units[0] = "s"
        if dt <= 0:
            raise MeasurementError(f"the sampling interval {dt!r} is not positive", file=name)
    else:
        tunit = units[0]
        if tunit is None and time_unit is None:
            raise MeasurementError(
                f"the unit of the time column {xname!r} (column {cols[0] + 1}) is not given "
                "in the file; say it with --time-unit (s, ms, us, ns or ps), or put it in "
                "the column name (e.g. 't_ns', 'Time (us)')",
                file=name,
                line=first if first else first + 1,
            )
        if tunit is not None and time_unit is not None and (
            _time_scale(tunit) != _time_scale(time_unit)
        ):
            raise MeasurementError(
                f"the time column {xname!r} is in {tunit!r} by the file, but the time unit "
                f"given is {time_unit!r}",
                file=name,
                line=first if first else first + 1,
            )
        tunit = tunit if tunit is not None else time_unit
        scale = _time_scale(tunit)
        if scale is None:
            raise MeasurementError(
                f"the time column {xname!r} has the unit {tunit!r}; expected s, ms, us, ns "
                "or ps",
                file=name,
                line=first,
            )
        time = time * scale
    dt_all = np.diff(time)
    bad = np.flatnonzero(dt_all <= 0)
    if bad.size:
        i = nonblank[start + int(bad[0]) + 1]
        raise MeasurementError(
            f"time does not increase: {time[bad[0] + 1]:.6g} s after {time[bad[0]]:.6g} s "
            "(is the first column time?)",
            file=name,
            line=i + 1,
        )
    channels: dict[str, np.ndarray] = {}
    chan_units: dict[str, str] = {}
    for k in range(1, len(cols)):
        cname = names[k]
        while cname in channels:
            cname += "'"
        unit = units[k]
        if unit is None:
            warnings.append(f"no unit for the channel {cname!r}: volts assumed")
            unit = "V"
        scale, base = _value_scale(unit)
        if scale is None:
            raise MeasurementError(
                f"the channel {cname!r} has the unit {unit!r}; expected V, mV, kV, A or mA",
                file=name,
                line=first,
            )
        channels[cname] = table[:, k] * scale
        chan_units[cname] = base
    return ScopeTrace(
        path=name,
        time=time,
        channels=channels,
        units=chan_units,
        header=header,
        warnings=warnings,
        first_data_line=first + 1,
    )


def _column_names(
    header: list[str], sep: str | None, cols: list[int], decimal_comma: bool
) -> tuple[list[str], list[str | None]]:
    names: list[str] = ["time"] + [f"ch{k}" for k in range(1, len(cols))]
    units: list[str | None] = [None] * len(cols)
    candidates = [ln for ln in header if ln.strip()]
    units_line: list[str] | None = None
    names_line: list[str] | None = None
    picked_lines = []
    for ln in candidates[-2:]:
        f = _split(ln, sep)
        picked_lines.append([f[c] if c < len(f) else "" for c in cols])
    if picked_lines:
        last = picked_lines[-1]
        tokens = [x for x in last if x]
        is_units = bool(tokens) and any(_looks_like_unit(x) for x in tokens) and all(
            _looks_like_unit(x) or x.strip().lower() in _INDEX_NAMES for x in tokens
        )
        if is_units and len(picked_lines) == 2 and any(picked_lines[0]):
            # a line of units (or axis types) below a line of names
            units_line, names_line = last, picked_lines[0]
        elif not any(_is_number(x, decimal_comma) for x in tokens) and tokens:
            names_line = last
    if names_line is not None:
        for k, tok in enumerate(names_line):
            if tok:
                n, u = _name_and_unit(tok)
                names[k] = n
                units[k] = u
    if units_line is not None:
        for k, tok in enumerate(units_line):
            if tok:
                units[k] = tok.strip().strip("()[]").strip()
    # a name that is itself a unit ("s", "Volt") doubles as the unit
    for k, n in enumerate(names):
        if units[k] is None and names_line is not None and _looks_like_unit(n):
            units[k] = n
    return names, units


def _header_values(
    header: list[str], sep: str | None, decimal_comma: bool
) -> dict[str, tuple[float, str]]:
    """``key -> (number, unit)`` from header lines and column-name/value line
    pairs (``X,CH1,Start,Increment`` above ``Sequence,Volt,-1e-6,2e-9``)."""
    out: dict[str, tuple[float, str]] = {}
    rows = [_split(ln, sep) for ln in header if ln.strip()]
    for f in rows:
        for j in range(len(f) - 1):
            key = f[j].strip().rstrip(":").strip().lower()
            if key and not _is_number(key, decimal_comma):
                val, unit = _number_and_unit(f[j + 1], decimal_comma)
                if val is not None:
                    out.setdefault(key, (val, unit))
        if len(f) == 1 and ":" in f[0]:
            key, _, rest = f[0].partition(":")
            val, unit = _number_and_unit(rest, decimal_comma)
            if val is not None:
                out.setdefault(key.strip().lower(), (val, unit))
    for upper, lower in zip(rows[:-1], rows[1:], strict=True):
        for j, key in enumerate(upper):
            k = key.strip().lower()
            if k in _START_KEYS + _STEP_KEYS and j < len(lower):
                val, unit = _number_and_unit(lower[j], decimal_comma)
                if val is not None:
                    out[k] = (val, unit)
    return out


def _number_and_unit(tok: str, decimal_comma: bool) -> tuple[float | None, str]:
    m = re.match(r"^\s*([+-]?(?:\d+[.,]?\d*|[.,]\d+)(?:[eE][+-]?\d+)?)\s*([A-Za-zµμ]*)\s*$", tok)
    if not m:
        return None, ""
    num = m.group(1)
    if "," in num:
        if not decimal_comma and not re.fullmatch(r"[+-]?\d+,\d+([eE][+-]?\d+)?", num):
            return None, ""
        num = num.replace(",", ".")
    try:
        return float(num), m.group(2)
    except ValueError:
        return None, ""
