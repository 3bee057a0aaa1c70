"""Numbers as SPICE writes them: ``2n``, ``2nH``, ``100meg``, ``1.5e-9``.

Scale suffixes (case-insensitive, as in ngspice): f=1e-15, p=1e-12, n=1e-9,
u=1e-6, m=1e-3, k=1e3, meg=1e6, g=1e9, t=1e12; ``mil`` = 25.4e-6. Letters
after the number and its suffix are ignored (``5nH`` is 5e-9), as in SPICE.
"""

from __future__ import annotations

import math
import re

_SUFFIX = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3, "k": 1e3,
           "meg": 1e6, "g": 1e9, "t": 1e12, "mil": 25.4e-6}
_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)(meg|mil|[fpnumkgt])?([a-z]*)\s*$",
                     re.IGNORECASE)


def parse_spice_number(text: str | float | int) -> float:
    """The value of a SPICE-style number; raises ``ValueError`` naming the text."""
    if isinstance(text, bool):
        raise ValueError(f"{text!r} is not a number")
    if isinstance(text, int | float):
        value = float(text)
    else:
        m = _NUMBER.match(text)
        if not m:
            raise ValueError(f"{text!r} is not a number (expected e.g. 2e-9, 2n, 2nH or 100meg)")
        value = float(m.group(1)) * _SUFFIX.get((m.group(2) or "").lower(), 1.0)
    if not math.isfinite(value):
        raise ValueError(f"{text!r} is not a finite number")
    return value
