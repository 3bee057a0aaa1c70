"""The routes file's values checked where they are read: :class:`Context`
carries the file, its line map, the units and the layers, and turns a bad
value into a :class:`geometry.errors.RoutesError` naming the key path and the
line (see :mod:`geometry.routes`).
"""

from __future__ import annotations

import math
import sys
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any, NoReturn

from geometry.errors import RoutesError
from geometry.limits import (
    MAX_LENGTH_M,
    MAX_MAGNITUDE,
    MAX_POINTS_PER_ENTRY,
    MIN_MAGNITUDE,
    MIN_SIZE_M,
)
from geometry.locate import KeyPath, LineMap, format_path
from geometry.model import (
    Layer,
    Point2,
    Unit,
    canonical_net,
)

if sys.version_info >= (3, 11):
    pass
else:  # pragma: no cover - Python 3.10
    pass

FORMAT = "parasite-routes/1"
DEFAULT_SNAP_M = 1e-6  # m: two points closer than this are one point (spec default)
_NAME_FORBIDDEN = set(" \t\r\n=(),;")


@dataclass
class Context:
    """What an entry parser needs: the file, its line map, the unit scale, the
    layers, and helpers that check a value and raise a located error."""

    file: str
    lines: LineMap
    units: Unit = "m"
    scale: float = 1.0
    snap: float = DEFAULT_SNAP_M  # m
    layers: dict[str, Layer] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)  # geometry.traps: unit traps

    # -- errors ---------------------------------------------------------
    def warn(self, path: KeyPath, message: str) -> None:
        """Note a warning at ``path`` (it changes no value)."""
        from geometry.traps import warning

        self.warnings.append(warning(self.file, self.lines.line_of(path), format_path(path),
                                     message))

    def fail(self, path: KeyPath, message: str) -> NoReturn:
        raise RoutesError(message, file=self.file, line=self.lines.line_of(path),
                          key=format_path(path) or None)

    # -- structure ------------------------------------------------------
    def table(self, value: Any, path: KeyPath, keys: Sequence[str],
              required: Sequence[str] = ()) -> dict[str, Any]:
        """Check that ``value`` is a table with only ``keys`` and all of ``required``."""
        if not isinstance(value, dict):
            self.fail(path, f"must be a table (TOML) or object (JSON) with keys "
                            f"{', '.join(keys)}; got {_describe(value)}")
        for k in value:
            if k not in keys:
                self.fail(path + (k,), f"unknown key {k!r}; accepted keys here: {', '.join(keys)}")
        for k in required:
            if k not in value:
                self.fail(path, f"missing required key {k!r} (accepted keys: {', '.join(keys)})")
        return value

    def array(self, value: Any, path: KeyPath, what: str,
              limit: int = MAX_POINTS_PER_ENTRY) -> list[Any]:
        """An array of at most ``limit`` items (:mod:`geometry.limits`)."""
        if not isinstance(value, list):
            self.fail(path, f"must be an array of {what}; got {_describe(value)}")
        if len(value) > limit:
            self.fail(path, f"holds {len(value)} {what}; at most {limit} are accepted here "
                            f"(a limit far above any real board, see 'Limits' in "
                            f"docs/routes-file.md)")
        return value

    # -- scalars --------------------------------------------------------
    def number(self, value: Any, path: KeyPath, what: str = "a number") -> float:
        """A finite number of magnitude within [1e-30, 1e30] (or 0)."""
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            self.fail(path, f"must be {what}; got {_describe(value)}")
        try:
            x = float(value)
        except OverflowError:
            x = math.inf
        if not math.isfinite(x) and isinstance(value, float):
            self.fail(path, f"must be {what} (finite); got {value!r}")
        if not math.isfinite(x) or abs(x) > MAX_MAGNITUDE or (x != 0 and abs(x) < MIN_MAGNITUDE):
            self.fail(path, f"must be {what}, finite and of magnitude between "
                            f"{MIN_MAGNITUDE:g} and {MAX_MAGNITUDE:g} (or 0); got {_num(value)}")
        return x

    def checked(self, value: Any, path: KeyPath, low: float, high: float,
                what: str = "a number", *, low_open: bool = False, scale: float = 1.0) -> float:
        """A number in ``[low, high]`` (``(low, high]`` with ``low_open``), both in
        SI, after multiplying by ``scale``; the shared check of every range."""
        x = self.number(value, path, what) * scale
        if not (low < x if low_open else low <= x) or not x <= high:
            lo = "(" if low_open else "["
            self.fail(path, f"must be {what}; got {_num(value)} (accepted: "
                            f"{lo}{low / scale:g}, {high / scale:g}])")
        return x

    def coordinate(self, value: Any, path: KeyPath) -> float:
        """A coordinate in the file's units, in metres, within +-10 m."""
        return self.checked(value, path, -MAX_LENGTH_M, MAX_LENGTH_M,
                            f"a coordinate in {self.units}", scale=self.scale)

    def length(self, value: Any, path: KeyPath, *, positive: bool = False,
               non_negative: bool = False) -> float:
        """A length in the file's units, returned in metres."""
        what = f"a {'positive ' if positive else ''}length in {self.units}"
        if non_negative:
            what = f"a length >= 0 in {self.units}"
        x = self.number(value, path, what)
        if positive and x <= 0:
            self.fail(path, f"must be {what}; got {_num(value)}")
        if non_negative and x < 0:
            self.fail(path, f"must be {what}; got {_num(value)}")
        low = MIN_SIZE_M if positive else (0.0 if non_negative else -MAX_LENGTH_M)
        return self.checked(value, path, low, MAX_LENGTH_M, what, scale=self.scale)

    def string(self, value: Any, path: KeyPath, what: str = "a string") -> str:
        if not isinstance(value, str):
            self.fail(path, f"must be {what}; got {_describe(value)}")
        if not value.strip():
            self.fail(path, f"must be {what}, not empty")
        return value

    def net(self, value: Any, path: KeyPath) -> str:
        what = "a netlist node name (text without spaces, '=', '(', ')', ',' or ';')"
        text = self.string(value, path, what)
        if any(c in _NAME_FORBIDDEN for c in text):
            self.fail(path, f"must be {what}; got {text!r}")
        return canonical_net(text)

    def point(self, value: Any, path: KeyPath) -> Point2:
        what = f"a point [x, y] in {self.units}"
        if not isinstance(value, list) or len(value) != 2:
            self.fail(path, f"must be {what}; got {_describe(value)}")
        return (self.coordinate(value[0], path + (0,)), self.coordinate(value[1], path + (1,)))

    def layer(self, value: Any, path: KeyPath) -> str:
        name = self.string(value, path, "a layer name")
        if name not in self.layers:
            known = ", ".join(repr(k) for k in self.layers) or "none are defined"
            self.fail(path, f"unknown layer {name!r}; the layers are: {known}")
        return name

    def terminal(self, value: Any, path: KeyPath) -> tuple[str, str, str]:
        """``"M1:d"`` -> (as written, element lower-case, terminal lower-case)."""
        what = "a terminal 'ELEMENT:TERMINAL' such as 'M1:d' or 'R3:1'"
        text = self.string(value, path, what)
        elem, sep, term = text.strip().rpartition(":")
        if not sep or not elem.strip() or not term.strip() or any(
            c in _NAME_FORBIDDEN for c in elem.strip() + term.strip()
        ):
            self.fail(path, f"must be {what}; got {text!r}")
        return text, elem.strip().lower(), term.strip().lower()

    def display(self, metres: float) -> str:
        """A length in metres, written in the file's units for messages."""
        return f"{metres / self.scale:.6g} {self.units}"


def _describe(value: Any) -> str:
    if isinstance(value, bool):
        return f"the boolean {str(value).lower()}"
    if isinstance(value, str):
        return f"the string {value!r}"
    if isinstance(value, (int, float)):
        return f"the number {_num(value)}"
    if isinstance(value, list):
        return f"an array of {len(value)} item{'s' if len(value) != 1 else ''}"
    if isinstance(value, dict):
        return "a table"
    return f"a value of type {type(value).__name__}"


def _num(value: Any) -> str:
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, int) and not isinstance(value, bool):
        return (str(value) if abs(value) < 10**40
                else f"an integer of about {int(value.bit_length() * 0.30103) + 1} digits")
    return str(value)
