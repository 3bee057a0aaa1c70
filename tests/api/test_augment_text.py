"""The library API with no files: ``parasite.augment_text`` and
``parasite.report_of`` (text in; netlist text and report out)."""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import parasite
from geometry.errors import RoutesError
from parasite.report import report_csv, report_json, report_text
from tests.boards import ONE_LAYER, pin, trace, write
from tests.reference import gmd_rectangle, mutual_parallel_filaments, self_straight_gmd

F_AC = 1e6  # Hz: low enough that skin effect plays no part in Im(Z)

PORT_NETLIST = f"""port test (AC drive of a go-and-return pair; invented test scenario)
I1 p n AC 1
R0 p n 1e-6
RLEAK n 0 1meg
.ac lin 1 {F_AC} {F_AC}
.end
"""


def _pair(length: float = 50.0, width: float = 1.0, gap: float = 3.0) -> str:
    """Go on net p at y = 0, return on net n at y = gap (mm), driven at x = 0 by
    I1 and joined at x = length by R0."""
    return (ONE_LAYER + trace("p", [(0.0, 0.0), (length, 0.0)], width)
            + trace("n", [(length, gap), (0.0, gap)], width)
            + pin("I1:p", (0.0, 0.0)) + pin("R0:1", (length, 0.0))
            + pin("I1:n", (0.0, gap)) + pin("R0:2", (length, gap)))


@pytest.mark.ngspice
def test_augment_text_pair_in_ngspice(tmp_path: Path) -> None:
    """The augmented text of a go-and-return pair (two 50 mm x 1 mm traces 3 mm
    apart), simulated by ngspice's AC analysis, shows L1 + L2 - 2M (coupled
    inductors in series opposition, standard circuit theory) with L from the
    GMD method (Grover, *Inductance Calculations*, 1946, ch. 5; Rosa 1908) and
    M from Grover's parallel-filament formula; both approximations are within
    about 0.5% here, hence 1%."""
    from parasite.spice import run_ngspice

    result = parasite.augment_text(PORT_NETLIST, _pair())
    assert isinstance(result.netlist_text, str)
    res = run_ngspice(result.netlist_text.encode(), base_dir=tmp_path)
    z = complex(np.asarray(res.vector("v(n)"))[0] - np.asarray(res.vector("v(p)"))[0])
    Ls = self_straight_gmd(50e-3, gmd_rectangle(1e-3, 35e-6))
    M = mutual_parallel_filaments(50e-3, 3e-3)
    assert z.imag / (2 * math.pi * F_AC) == pytest.approx(2 * Ls - 2 * M, rel=0.01)


def test_augment_text_equals_the_files_run(tmp_path: Path) -> None:
    """The command-line contract: ``parasite augment`` (files) and the library
    on the same text give byte-identical netlists and reports when the names
    given for the text are the file names (the CLI is a layer over the same
    functions)."""
    n = write(tmp_path, "pair.cir", PORT_NETLIST)
    r = write(tmp_path, "pair.routes.toml", _pair())
    from_files = parasite.augment_files(n, r)
    from_text = parasite.augment_text(PORT_NETLIST, _pair(), netlist_name=n, routes_name=r)
    assert from_text.netlist_bytes == from_files.netlist_bytes
    assert report_json(from_text.report) == report_json(from_files.report)


def test_report_of_formats() -> None:
    """``report_of`` gives what ``parasite report --format`` writes: the same
    text as the report functions applied to ``augment_text``'s report."""
    rep = parasite.augment_text(PORT_NETLIST, _pair()).report
    assert parasite.report_of(PORT_NETLIST, _pair(), fmt="json") == report_json(rep)
    assert parasite.report_of(PORT_NETLIST, _pair(), fmt="text") == report_text(rep)
    assert (parasite.report_of(PORT_NETLIST, _pair(), fmt="csv", table="couplings")
            == report_csv(rep, "couplings"))
    with pytest.raises(ValueError, match="unknown report format"):
        parasite.report_of(PORT_NETLIST, _pair(), fmt="xml")


def test_json_routes_text() -> None:
    """A routes file given as JSON text (``routes_format="json"``) is read like
    the file: one via-free board, two pins, the trace's inductor card is there."""
    routes = ('{"format": "parasite-routes/1", "units": "mm", "layers": {"top": {"z": 1.565, '
              '"thickness": 0.035}}, "trace": [{"net": "p", "layer": "top", "width": 1, '
              '"points": [[0, 0], [50, 0]]}], "pin": [{"terminal": "I1:p", "at": [0, 0], '
              '"layer": "top"}, {"terminal": "R0:1", "at": [50, 0], "layer": "top"}]}')
    text = parasite.augment_text(PORT_NETLIST, routes, routes_format="json").netlist_text
    assert "Lp_p_1 " in text


def test_bad_routes_text_names_the_given_name_and_line() -> None:
    """Bad input raises the package's error with the display name and the line
    (the routes file's contract: the file, the key path and the line)."""
    bad = _pair().replace("width = 1.0", "width = -1.0", 1)
    with pytest.raises(RoutesError) as exc:
        parasite.augment_text(PORT_NETLIST, bad, routes_name="board.routes.toml")
    assert exc.value.file == "board.routes.toml"
    assert exc.value.line == bad[:bad.index("width = -1.0")].count("\n") + 1


def test_include_dir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """``.include`` in netlist text is looked for in ``include_dir``, by default
    the working folder: an element of the included file (not placed by a pin)
    is known, and a missing include is the package's error naming it."""
    from parasite.errors import ParasiteError

    write(tmp_path, "leak.inc", "RLEAK n 0 1meg\n")
    netlist = PORT_NETLIST.replace("RLEAK n 0 1meg\n", ".include leak.inc\n")
    result = parasite.augment_text(netlist, _pair(), include_dir=tmp_path)
    assert ".include leak.inc" in result.netlist_text
    assert result.report["summary"]["branches"] == 2
    monkeypatch.chdir(tmp_path)
    assert parasite.augment_text(netlist, _pair()).netlist_bytes == result.netlist_bytes
    with pytest.raises(ParasiteError, match="leak.inc"):
        parasite.augment_text(netlist, _pair(), include_dir=tmp_path / "elsewhere")


def test_import_is_light() -> None:
    """``import parasite`` loads neither numpy nor scipy (the CLI starts fast);
    the API is loaded on first use."""
    code = ("import sys, parasite; assert 'numpy' not in sys.modules, 'numpy'; "
            "assert 'scipy' not in sys.modules, 'scipy'; parasite.augment_text; "
            "assert 'numpy' in sys.modules")
    subprocess.run([sys.executable, "-c", code], check=True)
