"""Warnings for the classic unit traps of a routes file.

The numbers keep their SPICE meaning (``m`` and ``M`` are milli, ``meg`` is
mega; a bare number is in the base unit), and a warning never changes one. A
warning names the file, the line and the key path, and says what the value
was read as, so that ``--strict`` can stop a makefile on it.

The traps (common practice of board design, not from a published source):

* a frequency or value written with an ``M``/``m`` prefix, which SPICE reads
  as milli, where mega was plausibly meant (``"300MHz"`` is 0.3 Hz);
* a loop limit above 1 uH: a loop of copper on a board is nanohenries (a bare
  ``1.5`` is 1.5 H);
* a board larger than 1 m across (millimetre numbers with ``units = "m"``);
* a via end that joins no copper (it dangles, and the loop it is part of is
  not the one that was drawn).
"""

from __future__ import annotations

import re
from collections.abc import Iterable

from geometry.values import parse_spice_number

LOOP_LIMIT_MAX = 1e-6  # H: above this a board loop's limit is taken to be a unit slip
BOARD_SPAN_MAX = 1.0  # m: a board larger than this is taken to be a unit slip
FREQUENCY_MIN = 1e3  # Hz: a ringing or switching frequency below this is implausible

_SUFFIX = re.compile(r"[0-9.]\s*(?:[eE][+-]?\d+)?([A-Za-z]+)\s*\Z")


def warning(file: str, line: int | None, key: str, message: str) -> str:
    """One warning line, as the copper graph writes them: ``FILE:LINE: warning: KEY: MESSAGE``."""
    where = f"{file}:{line}" if line is not None else file
    return f"{where}: warning: {key}: {message}"


def milli_prefix(text: str, unit: str) -> str | None:
    """The reason to warn about ``text`` (a SPICE-style value in ``unit``), or None.

    Warns on an upper-case ``M`` scale prefix that is not ``MEG`` or ``MIL``
    (SPICE reads ``300MHz`` as 300 milli), and for frequencies on any ``m``
    prefix that gives less than 1 kHz (a millihertz ringing frequency is
    never meant).
    """
    m = _SUFFIX.search(text)
    if not m:
        return None
    letters = m.group(1)
    low = letters.lower()
    if not low.startswith("m") or low.startswith(("meg", "mil")):
        return None
    value = parse_spice_number(text)
    if value is None:
        return None
    read = f"{value:g} {unit}"
    if letters[0] == "M" or (unit == "Hz" and value < FREQUENCY_MIN):
        mega = parse_spice_number(text[: m.start(1)] + "meg" + letters[1:])
        return (f"{text!r} is read as {read}: SPICE reads 'M' and 'm' as milli; "
                f"for mega write '{text[: m.start(1)]}meg{letters[1:]}' ({mega:g} {unit})")
    return None


def loop_limit(value: float) -> str | None:
    """The reason to warn about a loop limit of ``value`` (H), or None."""
    if value > LOOP_LIMIT_MAX:
        return (f"the limit is read as {value:g} H, above 1 uH, far more than a loop of "
                f"board copper; a bare number is in henries (write '1.5n' for 1.5 nH)")
    return None


def board_span(points: Iterable[tuple[float, float]]) -> float:
    """The larger side (m) of the box around ``points`` (m); 0 for none."""
    xs, ys = [], []
    for x, y in points:
        xs.append(x)
        ys.append(y)
    if not xs:
        return 0.0
    return max(max(xs) - min(xs), max(ys) - min(ys))


def board_size(span: float, units: str) -> str | None:
    """The reason to warn about a board ``span`` metres across, or None."""
    if span > BOARD_SPAN_MAX:
        return (f"the copper spans {span:g} m (read with units = {units!r}), more than 1 m; "
                f"are the numbers in another unit (units = \"mm\")?")
    return None
