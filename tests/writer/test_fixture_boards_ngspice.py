"""Every fixture board augments and runs in ngspice without errors or warnings
about the added cards; the original cards are intact; the output is the same
bytes from run to run."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from parasite.augment import augment_files
from parasite.spice import run_ngspice
from tests.boards import ROOT

pytestmark = pytest.mark.ngspice

ROOT = ROOT
BOARDS = sorted(
    [p for p in (ROOT / "fixtures" / "routes").glob("*.routes.*")
     if (p.parent / (p.name.split(".routes.")[0] + ".cir")).exists()]
) + [ROOT / "fixtures" / "demo" / "buck.routes.toml"]


def _netlist_for(routes: Path) -> Path:
    return routes.parent / (routes.name.split(".routes.")[0] + ".cir")


def _tokens(line: str) -> list[str]:
    return re.split(r"[\s,()=]+", line.strip())


@pytest.mark.parametrize("routes", BOARDS, ids=lambda p: p.name)
def test_fixture_board_runs_in_ngspice(routes: Path, tmp_path: Path) -> None:
    netlist = _netlist_for(routes)
    first = augment_files(str(netlist), str(routes))
    again = augment_files(str(netlist), str(routes))
    assert first.netlist_bytes == again.netlist_bytes

    if first.report["segments"]:
        original = netlist.read_bytes().splitlines(keepends=True)
        augmented = first.netlist_bytes.splitlines(keepends=True)
        # the added block is one run of lines; without it, the original lines come back in
        # order, each unchanged or differing only in node tokens (same card, same token count)
        lo = next(i for i, ln in enumerate(augmented) if ln.startswith(b"* ---- parasite: copper"))
        hi = next(i for i, ln in enumerate(augmented)
                  if ln.startswith(b"* ---- end of parasite copper"))
        rest = augmented[:lo] + augmented[hi + 1:]
        assert len(rest) == len(original)
        for line, new in zip(original, rest, strict=True):
            if new != line:
                a, b = _tokens(line.decode("latin-1")), _tokens(new.decode("latin-1"))
                assert len(a) == len(b) and a[0] == b[0], (line, new)
    else:
        # command-line contract: a routes file that places no copper gives the input's bytes;
        # its loops are still solved, and with no copper they have no copper L or R
        assert first.netlist_bytes == netlist.read_bytes()
        assert first.report["loops"]
        for loop in first.report["loops"]:
            assert loop["inductance"] == 0.0 and loop["resistance"] == 0.0, loop

    result = run_ngspice(first.netlist_bytes, base_dir=netlist.parent, name=str(netlist))
    bad = [w for w in result.warnings if re.search(r"\b(lp_|rp_|kp_)", w, re.IGNORECASE)]
    assert not bad, bad
    assert "not positive definite" not in result.log.lower()
