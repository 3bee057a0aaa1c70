"""A double-pulse test: several edges of one direction, paired in order.

Fixture: fixtures/ring/double_pulse.cir (invented) and its synthetic
"measured" file, written by fixtures/ring/make_measured.py from the same
circuit with a 6 nH loop inductance instead of 3 nH, sampled at 5 GS/s with
the trigger 0.9 us after the simulation's start. The known answers come from
that script, not from this code: every measured edge lines up with its
simulated edge of the same order by the trigger shift of 0.9 us, and the
measured ring implies the script's 6 nH loop. The switches are subcircuits,
so the ring capacitance must come from the device inside the low-side
instance (XLS.M1, which blocks after a rising edge). Waveforms by ngspice.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from parasite.cli import main
from parasite.ring.analyse import analyse_ring

pytestmark = pytest.mark.ngspice

ROOT = Path(__file__).resolve().parents[2]
FIX = ROOT / "fixtures" / "ring"
NETLIST = str(FIX / "double_pulse.cir")
MEASURED = str(FIX / "double_pulse.measured.csv")
TRIGGER = 0.9e-6  # s, fixtures/ring/make_measured.py
L_LOOP = 6e-9  # H, the loop inductance make_measured.py simulates


@pytest.fixture(scope="module")
def by_order():  # type: ignore[no-untyped-def]
    return analyse_ring(NETLIST, None, "sw", measured_path=MEASURED)


def test_edges_paired_first_with_first(by_order) -> None:  # type: ignore[no-untyped-def]
    """Two falling and two rising edges in each waveform; edge k of the
    measurement with edge k of the simulation, each shifted by the trigger
    delay (0.9 us) within 2 ns (the 50 % crossings of two circuits with
    different loop inductance differ by well under that)."""
    comps = by_order.report["comparison"]
    assert [c["direction"] for c in comps] == ["falling", "rising", "falling", "rising"]
    assert [c["ideal_edge"] for c in comps] == [1, 2, 3, 4]
    for c in comps:
        assert c["time_offset"] == pytest.approx(TRIGGER, abs=2e-9)
    assert by_order.report["pairing"] == "order"


def test_last_and_numbered_pairing() -> None:
    """'last' pairs every measured edge with the last simulated edge of its
    direction (3 and 4); a number N starts at simulated edge N."""
    last = analyse_ring(NETLIST, None, "sw", measured_path=MEASURED, edge_rule="last")
    assert [c["ideal_edge"] for c in last.report["comparison"]] == [3, 4, 3, 4]
    third = analyse_ring(NETLIST, None, "sw", measured_path=MEASURED, edge_rule=3)
    comps = third.report["comparison"]
    assert [c["ideal_edge"] for c in comps] == [3, 4, None, None]
    assert comps[0]["time_offset"] == pytest.approx(TRIGGER + 3.0e-6, abs=2e-9)


def test_switch_inside_a_subcircuit_gives_the_ring_capacitance(by_order) -> None:  # type: ignore[no-untyped-def]
    """The rising edges' rings: capacitance from XLS.M1 (inside the
    instance), and the loop the script simulated (6 nH) within 5 % (the
    capacitance is the small-signal value at the blocked voltage; the real
    one varies with voltage along the ring)."""
    fits = [f for f in by_order.report["fit"] if f["source"].startswith("measured")]
    assert [f["direction"] for f in fits] == ["rising", "rising"]
    for f in fits:
        assert [d["device"] for d in f["capacitance_from"]] == ["XLS.M1"]
        assert f["inductance"] == pytest.approx(L_LOOP, rel=0.05)
    assert not any("no switch on node" in w for w in by_order.report["warnings"])


def test_edge_option_refuses_a_bad_value(tmp_path: Path) -> None:
    result = CliRunner().invoke(main, ["ring", NETLIST, str(tmp_path / "none.toml"), "--node",
                                       "sw", "--edge", "first"])
    assert result.exit_code == 2
    assert "--edge" in result.output
