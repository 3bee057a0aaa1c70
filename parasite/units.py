"""Numbers as SPICE writes them (``2n``, ``2nH``, ``100meg``, ``1.5e-9``) for
command-line options; the parsing itself is :func:`geometry.values.parse_spice_number`."""

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
