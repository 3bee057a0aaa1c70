"""Shared test set-up: where the fixtures are, and small routes-file snippets
for boards written inside a test (all boards here are invented test
scenarios). Never imported by the library."""

from __future__ import annotations

from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
FIXTURES = ROOT / "fixtures"
ROUTES = FIXTURES / "routes"
DEMO = FIXTURES / "demo"

ONE_LAYER = 'format = "parasite-routes/1"\nunits = "mm"\n\n[layers.top]\nz = 1.565\nthickness = 0.035\n\n'
"""Header of a routes file in mm with one 35 um layer ``top`` at 1.565 mm."""

TWO_LAYERS = ONE_LAYER + "[layers.bottom]\nz = 0.0\nthickness = 0.035\n"
""":data:`ONE_LAYER` plus a 35 um layer ``bottom`` at 0 mm."""


def trace(net: str, pts: list[tuple[float, float]], width: float, layer: str = "top") -> str:
    """A ``[[trace]]`` entry (points and width in the file's units)."""
    p = ", ".join(f"[{x:.6f}, {y:.6f}]" for x, y in pts)
    return f'[[trace]]\nnet = "{net}"\nlayer = "{layer}"\nwidth = {width}\npoints = [{p}]\n\n'


def pin(term: str, at: tuple[float, float], layer: str = "top") -> str:
    """A ``[[pin]]`` entry placing terminal ``term`` at ``at``."""
    return f'[[pin]]\nterminal = "{term}"\nat = [{at[0]:.6f}, {at[1]:.6f}]\nlayer = "{layer}"\n\n'


def write(folder: Path, name: str, text: str) -> str:
    """Write ``text`` to ``folder / name`` (a test's tmp_path) and return the path."""
    p = folder / name
    p.write_text(text)
    return str(p)
