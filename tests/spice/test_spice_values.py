"""SPICE-style numbers ("3n", "1.5meg", "1mil") in the routes file and options.

Two references: the decimal value the text denotes, rounded once to the
nearest double (IEEE 754-2008, section 5.12: conversion of a decimal character
sequence is correctly rounded; Python's float literals do exactly that), and
ngspice 39 itself, which reads the same text as element values (its numbers
come from multiplying by the scale factor, so they may differ from the
correctly rounded value by an ulp or two: tolerance 1e-15 relative).
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

from geometry.values import parse_spice_number
from tests.boards import ROOT

ROOT = ROOT

# text, the decimal value it denotes written as a Python float literal
EXACT = [
    ("3n", 3e-09), ("2.5n", 2.5e-09), ("10nH", 1e-08), ("0.1u", 1e-07), ("7.3p", 7.3e-12),
    ("33.3m", 0.0333), ("4.7k", 4700.0), ("1.5meg", 1.5e06), ("1MEGHz", 1e06), ("2.2G", 2.2e09),
    ("0.3T", 3e11), ("6f", 6e-15), (".5n", 5e-10), ("1e3k", 1e06), ("-2n", -2e-09),
    ("12.5e-1n", 1.25e-09), ("3", 3.0),
    # ngspice's "mil": 25.4e-6 (ngspice manual, section 2.3, numbers)
    ("1mil", 2.54e-05), ("3mil", 7.62e-05), ("2milk", 5.08e-05), ("0.7MIL", 1.778e-05),
]


@pytest.mark.parametrize(("text", "value"), EXACT)
def test_value_is_the_decimal_number_rounded_once(text: str, value: float) -> None:
    assert parse_spice_number(text) == value  # exact: the same double


def test_the_product_would_not_be_exact() -> None:
    """What the decimal construction avoids (the reason for it): 3 * 1e-9 is one
    ulp above the double nearest to 3e-9."""
    assert 3 * 1e-9 != 3e-09
    assert parse_spice_number("3n") == 3e-09
    assert repr(parse_spice_number("3n")) == "3e-09"


@pytest.mark.parametrize("text", ["", ".", "e3", "n", "two", "2 n", "2n/s", "1e999", "nan", "1e+99999999999"])
def test_not_numbers_or_not_finite(text: str) -> None:
    assert parse_spice_number(text) is None


def test_limits_from_the_routes_file_are_exact() -> None:
    from geometry.routes import load_routes

    loops = load_routes(ROOT / "fixtures" / "routes" / "loops.routes.toml").loops
    assert loops[0].limit == 2.5e-09  # written "2.5n"
    assert loops[1].limit == 1e-08 and loops[1].frequency == 1e06  # "10nH", "1meg"
    demo = load_routes(ROOT / "fixtures" / "demo" / "buck.routes.toml").loops
    assert demo[0].limit == 3e-09  # written "3n"


@pytest.mark.ngspice
def test_ngspice_reads_the_same_values(tmp_path: Path) -> None:
    """Each text as a resistor value in ngspice 39; its @R[resistance] printed
    with 17 digits agrees within 1e-15 relative. "2mi" is milli (only "mil" is
    the thousandth of an inch), and "M" is milli too."""
    cases = [t for t, _ in EXACT if not t.startswith("-")] + ["2mi", "10M"]
    cards = [f"R{k} a 0 {t}" for k, t in enumerate(cases)]
    prints = " ".join(f"@r{k}[resistance]" for k in range(len(cases)))
    deck = "\n".join(["numbers read by ngspice (test scenario)", *cards, "I1 0 a DC 1", ".control",
                      "set numdgt=17", "op", f"print {prints}", "quit", ".endc", ".end", ""])
    path = tmp_path / "numbers.cir"
    path.write_text(deck)
    exe = shutil.which("ngspice") or "/usr/bin/ngspice"
    out = subprocess.run([exe, "-b", str(path)], capture_output=True, text=True, timeout=60).stdout
    read = {int(k): float(v) for k, v in re.findall(r"@r(\d+)\[resistance\] = (\S+)", out)}
    assert len(read) == len(cases), out
    for k, text in enumerate(cases):
        assert parse_spice_number(text) == pytest.approx(read[k], rel=1e-15, abs=0), text
    assert parse_spice_number("2mi") == 2e-03 and parse_spice_number("10M") == 1e-02
