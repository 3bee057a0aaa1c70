"""Units of oscilloscope-export columns: what a header says, as scale factors to SI.

A unit may sit in a column's name as ``Time (us)``, ``time(s)``, ``CH1[mV]``,
``Time [µs]``, ``t/ns``, ``V in volts`` or as a suffix after ``_`` (``t_ns``,
``sw_V``, ``TIME_US``). SI prefixes p, n, u/µ, m, k (M only for values); a
unit written all in capitals has its prefix read in lower case (``US`` is
µs, ``MS`` ms, ``MV`` mV), since exports that write capitals mean those.
"""

from __future__ import annotations

import re

_PREFIX = {"": 1.0, "p": 1e-12, "n": 1e-9, "u": 1e-6, "µ": 1e-6, "μ": 1e-6, "m": 1e-3,
           "k": 1e3, "K": 1e3, "M": 1e6}
_TIME_UNITS = {"s", "sec", "secs", "second", "seconds"}
_VALUE_UNITS = {"v": "V", "volt": "V", "volts": "V", "a": "A", "amp": "A", "amps": "A",
                "ampere": "A", "amperes": "A"}
TIME_UNITS = ("s", "ms", "us", "ns", "ps")  # accepted values of ``time_unit``

_UNIT_IN_NAME = re.compile(
    r"^(?P<name>.*?)\s*(?:\((?P<a>[^)]*)\)|\[(?P<b>[^\]]*)\]|/\s*(?P<c>\S+)|\s+in\s+(?P<d>\S+))\s*$",
    re.IGNORECASE,
)

# a unit after "_" at the end of a name: "t_ns", "sw_V", "TIME_US" (not after a
# blank: "Channel A" is a channel's name, not amperes)
_UNIT_SUFFIX = re.compile(r"^(?P<name>.*?[^_])_+(?P<unit>[A-Za-zµμ]+)$")


def name_and_unit(tok: str) -> tuple[str, str | None]:
    """A column name without its unit, and the unit as written (None: none given)."""
    m = _UNIT_IN_NAME.match(tok.strip())
    if m:
        unit = next(g for g in (m.group("a"), m.group("b"), m.group("c"), m.group("d")) if g)
        return (m.group("name").strip() or tok.strip()), unit.strip()
    m = _UNIT_SUFFIX.match(tok.strip())
    if m and looks_like_unit(m.group("unit")):
        return m.group("name"), m.group("unit")
    return tok.strip(), None


def looks_like_unit(tok: str) -> bool:
    """Whether ``tok`` is a time, voltage or current unit this module knows."""
    t = tok.strip().strip("()[]").strip()
    return time_scale(t) is not None or value_scale(t)[0] is not None


def caps(u: str) -> str:
    """A unit written all in capitals (``US``, ``MV``) with its prefix in lower case."""
    if len(u) >= 2 and u.isupper() and u[0] in "PNUMK":
        return u[0].lower() + u[1:]
    return u


def time_scale(unit: str | None) -> float | None:
    """Seconds per ``unit`` (``"ns"`` -> 1e-9), or None for no time unit."""
    if unit is None:
        return None
    u = caps(unit.strip())
    if u.lower() in _TIME_UNITS:
        return 1.0
    if len(u) >= 2 and u[0] in _PREFIX and u[1:].lower() in _TIME_UNITS and u[0] != "M":
        return _PREFIX[u[0]]
    return None


def value_scale(unit: str) -> tuple[float | None, str]:
    """SI units per ``unit`` and the SI unit (``"mV"`` -> (1e-3, "V")), or (None, "")."""
    u = caps(unit.strip())
    if u.lower() in _VALUE_UNITS:
        return 1.0, _VALUE_UNITS[u.lower()]
    if len(u) >= 2 and u[0] in _PREFIX and u[1:].lower() in _VALUE_UNITS:
        return _PREFIX[u[0]], _VALUE_UNITS[u[1:].lower()]
    return None, ""
