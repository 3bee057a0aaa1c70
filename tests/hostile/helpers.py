"""Running the command line in-process for the hostile-input tests: the
contract of docs/command-line.md (exit 0, 1, 2 or 3; an input error names its
file; nothing written on error; inputs unchanged). Boards here are invented
test scenarios. Never imported by the library."""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from click.testing import CliRunner

from parasite.cli import main

BOARD_CIR = "hostile test board (invented)\nV1 a 0 DC 1\nR1 a b 10\nR2 b 0 10\n.end\n"


def board_routes(extra: str = "", *, units: str = "mm", snap: str | None = None,
                 point: str = "[0, 0], [10, 0]", width: str = "0.5") -> str:
    """A one-trace routes file (net a from R1... V1) with ``extra`` appended."""
    head = f'format = "parasite-routes/1"\nunits = "{units}"\n'
    if snap is not None:
        head += f"snap = {snap}\n"
    return head + (
        "\n[layers.top]\nz = 1.565\nthickness = 0.035\n\n"
        "[layers.gnd]\nz = 1.2\nthickness = 0.035\nplane = \"0\"\n\n"
        f'[[trace]]\nnet = "a"\nlayer = "top"\nwidth = {width}\npoints = [{point}]\n\n'
        '[[pin]]\nterminal = "V1:p"\nat = [0, 0]\nlayer = "top"\n\n'
        '[[pin]]\nterminal = "R1:1"\nat = [10, 0]\nlayer = "top"\n\n'
    ) + extra


@dataclass
class Run:
    code: int
    stdout: str
    stderr: str
    written: set[str]  # files created or changed in the folder


def snapshot(folder: Path) -> dict[str, bytes]:
    out = {}
    for root, _dirs, names in os.walk(folder):
        for n in names:
            p = Path(root) / n
            out[str(p.relative_to(folder))] = p.read_bytes()
    return out


def run_cli(folder: Path, *args: str) -> Run:
    """Run ``parasite ARGS`` with ``folder`` as the working folder; an exception
    other than a clean exit propagates (a traceback fails the test)."""
    before = snapshot(folder)
    old = os.getcwd()
    os.chdir(folder)
    try:
        res = CliRunner().invoke(main, list(args), catch_exceptions=False)
    finally:
        os.chdir(old)
    after = snapshot(folder)
    written = {k for k, v in after.items() if before.get(k) != v}
    return Run(res.exit_code, res.stdout, res.stderr, written)


def put(folder: Path, name: str, text: str | bytes) -> str:
    p = folder / name
    p.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(text, bytes):
        p.write_bytes(text)
    else:
        p.write_text(text)
    return name
