"""Numbers written the SPICE way (``"2n"``, ``"10meg"``, ``"2nH"``, ``"5mil"``)."""

from __future__ import annotations

import decimal
import math
import re

# SPICE scale factors as powers of ten, case-insensitive; "meg" is 1e6 and "m" is
# milli (ngspice manual, section 2.3 "Numbers"; checked with ngspice 39, see shared
# notes: "M is milli, Meg is mega; letters after a number are ignored").
SPICE_EXPONENT: dict[str, int] = {
    "f": -15, "p": -12, "n": -9, "u": -6, "m": -3, "k": 3, "meg": 6, "g": 9, "t": 12,
}
SPICE_SCALE: dict[str, float] = {k: 10.0 ** e for k, e in SPICE_EXPONENT.items()}
"""The same factors as floats."""

# ngspice's "mil" suffix: 25.4e-6 (a thousandth of an inch in metres), written here
# as 254 x 10^-7 so that the value is built from decimal digits. Checked with
# ngspice 39: a resistor of "1mil" is 2.54e-05 ohm, "2milk" 5.08e-05, "2mi" 2e-03.
_MIL_DIGITS, _MIL_EXPONENT = 254, -7

_NUMBER = re.compile(
    r"\s*([+-]?)(\d*)(?:\.(\d*))?(?:[eE]([+-]?\d+))?([A-Za-z]*)\s*\Z"
)


def parse_spice_number(text: str) -> float | None:
    """``"2n"`` -> 2e-9, ``"1.5meg"`` -> 1.5e6, ``"2nH"`` -> 2e-9, ``"3"`` -> 3.0,
    ``"5mil"`` -> 1.27e-4.

    Scale suffixes ``f p n u m k meg g t`` and ``mil`` (25.4e-6, as ngspice
    reads it), any case; letters after the number and its suffix are ignored,
    as SPICE does. The value is built from the decimal digits and the suffix's
    power of ten, then rounded once to the nearest float, so ``"3n"`` is exactly
    the float ``3e-09`` (not ``3 * 1e-9``). Returns ``None`` when the text is not
    such a number (or is not finite).
    """
    m = _NUMBER.match(text)
    if not m:
        return None
    sign, whole, frac, exp, letters = m.groups()
    frac = frac or ""
    if not whole and not frac:  # "", ".", "e3", "n" are not numbers
        return None
    digits = whole + frac  # kept as text: any number of digits, no int size limit
    exponent = _exponent(exp) - len(frac)
    letters = letters.lower()
    if letters.startswith("meg"):
        exponent += SPICE_EXPONENT["meg"]
    elif letters.startswith("mil"):
        with decimal.localcontext() as ctx:  # exact: enough digits for the product
            ctx.prec = len(digits) + 4
            digits = str(decimal.Decimal(digits) * _MIL_DIGITS)
        exponent += _MIL_EXPONENT
    elif letters and letters[0] in SPICE_EXPONENT:
        exponent += SPICE_EXPONENT[letters[0]]
    value = float(f"{sign}{digits}e{exponent}")  # one correctly rounded conversion
    return value if math.isfinite(value) else None


def _exponent(text: str | None) -> int:
    """The exponent written after ``e``; one beyond any float's range stands
    for all larger ones (the value is then 0 or not finite either way)."""
    if not text:
        return 0
    if len(text.lstrip("+-").lstrip("0")) > 9:
        return -(10**9) if text.startswith("-") else 10**9
    return int(text)
