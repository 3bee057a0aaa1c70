"""``--node ELEMENT:TERMINAL``: reading one pin of a net that the copper spreads out.

With the routes file's copper wired in, the pins of one net are no longer the
same node. The reference for which point is read is the netlist reader's own
terminal lookup on the augmented netlist (parasite.netlist.parse_netlist,
terminal_node) and ngspice's waveform of that node.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from parasite.cli import main
from parasite.ring.analyse import analyse_ring, with_save

pytestmark = pytest.mark.ngspice

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "fixtures" / "demo"
NET, ROUTES = str(DEMO / "buck.cir"), str(DEMO / "buck.routes.toml")


def test_low_side_drain_is_read_where_it_is() -> None:
    """M2:d of the demo: the report names the terminal; the waveform is
    ngspice's voltage of the node on M2's drain in the augmented netlist,
    which peaks differently from node sw (M1's source) of the same run."""
    from parasite.augment import augment_files
    from parasite.netlist import parse_netlist
    from parasite.spice import run_ngspice

    result = analyse_ring(NET, ROUTES, "M2:d")
    report = result.report
    assert report["node"] == "sw" and report["terminal"] == "M2:d"
    assert report["read_at"].startswith("terminal d of M2 (node sw as written;")
    aug = augment_files(NET, ROUTES)
    node = parse_netlist(aug.netlist_bytes, "aug", DEMO).terminal_node("M2", "d")
    assert node != "sw"
    res = run_ngspice(with_save(aug.netlist_bytes, node), base_dir=DEMO, name="aug")
    v_drain = np.asarray(res.vector(f"v({node})")).real
    v_sw = np.asarray(res.vector("v(sw)")).real
    assert result.augmented is not None
    assert result.augmented.value.max() == pytest.approx(v_drain.max(), rel=1e-9)
    assert abs(v_drain.max() - v_sw.max()) > 0.5  # V: the copper between them rings


def test_terminal_of_a_subcircuit_instance() -> None:
    """XLS:d of the double-pulse fixture is node sw (the netlist's card)."""
    net = str(ROOT / "fixtures" / "ring" / "double_pulse.cir")
    result = analyse_ring(net, None, "XLS:d")
    assert result.report["node"] == "sw"
    assert len(result.metrics["ideal"]) == 4


def test_unknown_terminal_names_the_file_and_line(tmp_path: Path) -> None:
    result = CliRunner().invoke(main, ["ring", NET, ROUTES, "--node", "M2:q", "--quiet"])
    assert result.exit_code == 1
    assert "buck.cir:24: error: element M2 has no terminal 'q'" in result.stderr


def test_with_save_adds_a_node_only_to_decks_that_save() -> None:
    """A deck without .save saves every node (ngspice's default): unchanged."""
    plain = b"t\nV1 a 0 1\n.tran 1n 1u\n.end\n"
    assert with_save(plain, "b") == plain
    saved = b"t\nV1 a 0 1\n.save v(a)\n.tran 1n 1u\n.end\n"
    assert with_save(saved, "b") == b"t\nV1 a 0 1\n.save v(a)\n.tran 1n 1u\n.save v(b)\n.end\n"
