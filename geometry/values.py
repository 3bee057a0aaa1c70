"""Numbers written the SPICE way (``"2n"``, ``"10meg"``, ``"2nH"``)."""

from __future__ import annotations

import math
import re

# SPICE scale factors, case-insensitive; "meg" is 1e6 and "m" is milli
# (ngspice manual, section 2.3 "Numbers"; checked with ngspice 39, see
# shared notes: "M is milli, Meg is mega; letters after a number are ignored").
SPICE_SCALE: dict[str, float] = {
    "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3,
    "k": 1e3, "g": 1e9, "t": 1e12,
}

_NUMBER = re.compile(r"\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)([A-Za-z]*)\s*\Z")


def parse_spice_number(text: str) -> float | None:
    """``"2n"`` -> 2e-9, ``"1.5meg"`` -> 1.5e6, ``"2nH"`` -> 2e-9, ``"3"`` -> 3.0.

    Scale suffixes ``f p n u m k meg g t`` (any case); letters after the
    number and its suffix are ignored, as SPICE does. Returns ``None`` when
    the text is not such a number (or is not finite).
    """
    m = _NUMBER.match(text)
    if not m:
        return None
    value = float(m.group(1))
    letters = m.group(2).lower()
    if letters.startswith("meg"):
        value *= 1e6
    elif letters and letters[0] in SPICE_SCALE:
        value *= SPICE_SCALE[letters[0]]
    return value if math.isfinite(value) else None
