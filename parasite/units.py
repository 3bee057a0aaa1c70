"""Numbers as SPICE writes them (``2n``, ``2nH``, ``100meg``, ``1.5e-9``) for
command-line options (the parsing itself is :func:`geometry.values.parse_spice_number`),
and numbers with an SI prefix for the text reports."""

from __future__ import annotations

import math

from geometry.values import parse_spice_number as _parse


def parse_spice_number(text: str | float | int) -> float:
    """The value of a SPICE-style number; raises ``ValueError`` naming the text."""
    if isinstance(text, bool):
        raise ValueError(f"{text!r} is not a number")
    value = float(text) if isinstance(text, int | float) else _parse(text)
    if value is None or not math.isfinite(value):
        raise ValueError(f"{text!r} is not a number (expected e.g. 2e-9, 2n, 2nH or 100meg)")
    return value


_PREFIXES = ((1e-15, "f"), (1e-12, "p"), (1e-9, "n"), (1e-6, "u"), (1e-3, "m"), (1.0, ""),
             (1e3, "k"), (1e6, "M"), (1e9, "G"))


def engineering(value: float, unit: str, digits: int = 3) -> str:
    """``value`` with an SI prefix and ``digits`` significant digits, e.g. ``1.83 nH``."""
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}"
    scale, prefix = _PREFIXES[0]
    for s, p in _PREFIXES:
        if abs(value) >= s * 0.9995:
            scale, prefix = s, p
    return f"{value / scale:.{digits}g} {prefix}{unit}"
