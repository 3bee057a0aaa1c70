"""Reading ngspice raw files (binary and ASCII), one :class:`Plot` per analysis.

The format, as ngspice 39 writes it with ``-r FILE`` (checked on runs; the
ngspice manual describes the ``write`` command that produces it): per analysis
a text header of ``Key: value`` lines (``Title``, ``Date``, ``Plotname``,
``Flags`` = ``real`` or ``complex``, ``No. Variables``, ``No. Points``), a
``Variables:`` list of ``index name type`` lines, then either ``Binary:`` and
the points as little-endian float64 rows (two float64, real and imaginary, per
value when complex) or ``Values:`` and the points as text. Several analyses
follow one another in one file. The first variable is the scale (time,
frequency, or the swept source).

An aborted run leaves a header that says 0 points above partial data; the
reader then takes as many whole rows as the file holds.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from parasite.errors import SimulationError


def _canonical(name: str) -> str:
    return name.strip().lower()


def vector_aliases(name: str) -> list[str]:
    """Names under which ngspice may store the vector the user calls ``name``.

    ``sw`` and ``v(sw)`` are the same node voltage; ``vin#branch`` and
    ``i(vin)`` the same branch current (ngspice 39 writes ``v(sw)`` and
    ``i(vin)`` in raw files, older versions ``sw`` and ``vin#branch``).
    """
    key = _canonical(name)
    out = [key]
    m = re.fullmatch(r"v\((.+)\)", key)
    if m and "," not in m.group(1):
        out.append(m.group(1))
    m = re.fullmatch(r"i\((.+)\)", key)
    if m:
        out.append(m.group(1) + "#branch")
    m = re.fullmatch(r"(.+)#branch", key)
    if m:
        out.append(f"i({m.group(1)})")
    if not re.fullmatch(r"[vi]\(.+\)|.+#branch", key):
        out.append(f"v({key})")
    return out


@dataclass
class Plot:
    """One analysis of a raw file.

    ``vectors`` maps each lower-case vector name (as ngspice wrote it, e.g.
    ``time``, ``v(sw)``, ``i(vin)``) to its values: float64 for a real plot,
    complex128 for a complex one (AC analysis; the frequency scale is then
    returned as real). SI units: seconds, hertz, volts, amperes.
    """

    name: str
    scale_name: str
    vectors: dict[str, np.ndarray]
    title: str = ""
    flags: str = "real"
    types: dict[str, str] = field(default_factory=dict)

    @property
    def scale(self) -> np.ndarray:
        """The independent variable (time in s, frequency in Hz, ...)."""
        return self.vectors[self.scale_name]

    def find(self, name: str) -> str | None:
        """The stored name of the vector ``name`` refers to, or ``None``."""
        for alias in vector_aliases(name):
            if alias in self.vectors:
                return alias
        return None

    def vector(self, name: str) -> np.ndarray:
        """The vector ``name`` (case-insensitive; ``sw`` = ``v(sw)``,
        ``vin#branch`` = ``i(vin)``). Raises :class:`KeyError` listing the
        vectors present when there is none."""
        key = self.find(name)
        if key is None:
            raise KeyError(
                f"no vector {name!r} in the {self.name!r} plot; it has: " + ", ".join(self.vectors)
            )
        return self.vectors[key]


_HEADER_KEYS = ("title", "date", "plotname", "flags", "no. variables", "no. points", "command",
                "option", "dimensions")


def read_raw(path: str | Path) -> list[Plot]:
    """Read an ngspice raw file (binary or ASCII) into its plots."""
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise SimulationError(f"cannot read the raw file: {exc.strerror}", file=str(p)) from exc
    return read_raw_bytes(data, name=str(p))


def read_raw_bytes(data: bytes, *, name: str = "<raw>") -> list[Plot]:
    """Parse the bytes of an ngspice raw file. ``name`` is used in errors."""
    plots: list[Plot] = []
    pos = 0
    n = len(data)
    while pos < n:
        # Skip blank space between plots.
        while pos < n and data[pos : pos + 1] in (b"\n", b"\r", b" ", b"\t"):
            pos += 1
        if pos >= n:
            break
        header: dict[str, str] = {}
        names: list[str] = []
        types: dict[str, str] = {}
        mode = ""
        while True:
            end = data.find(b"\n", pos)
            if end < 0:
                raise SimulationError(
                    "the raw file ends inside a header (no 'Binary:' or 'Values:' line)", file=name
                )
            line = data[pos:end].decode("latin-1").rstrip("\r")
            pos = end + 1
            stripped = line.strip()
            low = stripped.lower()
            if low in ("binary:", "values:"):
                mode = low[:-1]
                break
            if low == "variables:":
                nvars = _int_header(header, "no. variables", name)
                for _ in range(nvars):
                    end = data.find(b"\n", pos)
                    if end < 0:
                        raise SimulationError("the raw file ends inside its variable list", file=name)
                    fields = data[pos:end].decode("latin-1").split()
                    pos = end + 1
                    if len(fields) < 3:
                        raise SimulationError(
                            f"unreadable variable line {' '.join(fields)!r} in the raw file",
                            file=name,
                        )
                    vname = _canonical(fields[1])
                    names.append(vname)
                    types[vname] = fields[2]
                continue
            if ":" in stripped:
                key, _, value = stripped.partition(":")
                header[key.strip().lower()] = value.strip()
            elif stripped:
                raise SimulationError(f"unexpected line {stripped!r} in the raw file", file=name)
        nvars = _int_header(header, "no. variables", name)
        npoints = _int_header(header, "no. points", name)
        if len(names) != nvars:
            raise SimulationError(
                f"the raw file declares {nvars} variables but lists {len(names)}", file=name
            )
        flags = header.get("flags", "real").lower()
        is_complex = "complex" in flags
        values: np.ndarray
        if mode == "binary":
            width = 16 if is_complex else 8
            row = width * nvars
            available = (n - pos) // row if row else 0
            if npoints == 0 or npoints > available:
                # Aborted run: the header was never updated (or the file was cut).
                npoints = available
            count = npoints * nvars * (2 if is_complex else 1)
            arr = np.frombuffer(data, dtype="<f8", count=count, offset=pos)
            pos += npoints * row
            if is_complex:
                # reinterpret (re, im) pairs: no arithmetic, so an inf stays an inf
                values = arr.view("<c16").reshape(npoints, nvars)
            else:
                values = arr.reshape(npoints, nvars)
        else:
            values, pos = _read_ascii_values(data, pos, nvars, npoints, is_complex, name)
        vectors: dict[str, np.ndarray] = {}
        for i, vname in enumerate(names):
            column: np.ndarray = np.array(values[:, i])
            vectors[vname] = column.real.copy() if (i == 0 and is_complex) else column
        plots.append(
            Plot(
                name=header.get("plotname", ""),
                scale_name=names[0] if names else "",
                vectors=vectors,
                title=header.get("title", ""),
                flags=flags,
                types=types,
            )
        )
    return plots


def _int_header(header: dict[str, str], key: str, name: str) -> int:
    try:
        return int(header[key].split()[0])
    except (KeyError, ValueError, IndexError):
        raise SimulationError(
            f"the raw file's header has no readable {key.title()!r} line", file=name
        ) from None


def _read_ascii_values(
    data: bytes, pos: int, nvars: int, npoints: int, is_complex: bool, name: str
) -> tuple[np.ndarray, int]:
    """Read the ``Values:`` section: per point an index, then one value per variable."""
    tokens: list[str] = []
    n = len(data)
    while pos < n:
        end = data.find(b"\n", pos)
        if end < 0:
            end = n
        line = data[pos:end].decode("latin-1")
        if line[:1].isalpha():  # the next plot's header ("Title: ...")
            break
        tokens.extend(line.split())
        pos = end + 1
    per_point = nvars + 1
    available = len(tokens) // per_point
    if npoints == 0 or npoints > available:
        npoints = available
    dtype = np.complex128 if is_complex else np.float64
    values = np.empty((npoints, nvars), dtype=dtype)
    try:
        for p in range(npoints):
            chunk = tokens[p * per_point + 1 : (p + 1) * per_point]
            for v, tok in enumerate(chunk):
                if is_complex:
                    re_s, _, im_s = tok.partition(",")
                    values[p, v] = complex(float(re_s), float(im_s or 0.0))
                else:
                    values[p, v] = float(tok)
    except ValueError as exc:
        raise SimulationError(f"unreadable number in the raw file: {exc}", file=name) from None
    return values, pos
