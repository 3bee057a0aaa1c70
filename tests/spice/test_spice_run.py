"""The ngspice runner against circuit theory and ngspice's own behaviour.

Every waveform here is produced by the real ngspice (never mocked) and checked
against a closed-form circuit result.
"""

from __future__ import annotations

import numpy as np
import pytest

from parasite.errors import SimulationError
from parasite.spice import SimulationResult, read_raw_bytes, run_ngspice
from parasite.spice.raw import vector_aliases

pytestmark = pytest.mark.ngspice

RC_DECK = """RC charging through a resistor
V1 in 0 PULSE(0 1 0 1n 1n 1 2)
R1 in out 1k
C1 out 0 1u
.tran 1u 5m 0 1u
.end
"""


def test_rc_transient_matches_the_exponential() -> None:
    """Step response of a series RC: v_C(t) = V (1 - exp(-t / RC)).

    Source: the first-order step response, e.g. J. W. Nilsson, S. A. Riedel,
    *Electric Circuits*, chapter "Response of first-order RL and RC circuits"
    (step response of an RC circuit) -- cited from memory; a standard result.
    Tolerance 2 mV on a 1 V step: the source's 1 ns rise and the trapezoidal
    integration at 1 us steps (tau = 1 ms) err by far less than that.
    """
    result = run_ngspice(RC_DECK, name="rc.cir")
    assert isinstance(result, SimulationResult)
    t = result.scale
    v = result.vector("v(out)")
    assert t[-1] == pytest.approx(5e-3)
    assert len(t) > 1000
    expected = 1.0 - np.exp(-t / 1e-3)
    assert np.max(np.abs(v - expected)) < 2e-3
    # one time constant: 1 - 1/e = 0.632
    assert np.interp(1e-3, t, v) == pytest.approx(1 - np.exp(-1), abs=1e-3)
    assert result.warnings == []


def test_vector_names_are_found_under_either_spelling() -> None:
    """``out`` and ``v(out)``, ``i(v1)`` and ``v1#branch`` name the same vectors."""
    result = run_ngspice(RC_DECK, name="rc.cir")
    np.testing.assert_array_equal(result.vector("out"), result.vector("V(OUT)"))
    np.testing.assert_array_equal(result.vector("i(v1)"), result.vector("V1#branch"))
    # the source supplies the capacitor's charging current: i = (V - v_C) / R,
    # entering the source's + terminal counts positive in SPICE, so i(v1) < 0.
    i = result.vector("i(v1)")
    v = result.vector("out")
    late = result.scale > 1e-5
    np.testing.assert_allclose(-i[late], (1.0 - v[late]) / 1e3, rtol=1e-6, atol=1e-9)
    with pytest.raises(KeyError, match="no vector 'nowhere'.*v\\(out\\)"):
        result.vector("nowhere")
    assert "v(sw)" in vector_aliases("sw")
    assert "vin#branch" in vector_aliases("I(Vin)")


def test_rl_ac_magnitude_matches_the_impedance() -> None:
    """|Z| of a series RL is sqrt(R^2 + (omega L)^2) (phasor impedance of a series
    connection; a standard circuit-theory result, e.g. Nilsson & Riedel,
    *Electric Circuits*, chapter on sinusoidal steady-state analysis -- from
    memory). A 1 V AC source drives R = 10 ohm in series with L = 1 mH; the
    source current is -V/Z. Tolerance 1e-9 relative: AC analysis is a single
    linear solve per frequency."""
    deck = """series RL
V1 in 0 AC 1
R1 in a 10
L1 a 0 1m
.ac dec 10 10 1meg
.end
"""
    result = run_ngspice(deck)
    f = result.scale
    assert f[0] == pytest.approx(10.0) and f[-1] == pytest.approx(1e6)
    i = result.vector("i(v1)")
    assert np.iscomplexobj(i)
    z = np.abs(1.0 / i)
    expected = np.sqrt(10.0**2 + (2 * np.pi * f * 1e-3) ** 2)
    np.testing.assert_allclose(z, expected, rtol=1e-9)
    # phase of Z = atan(omega L / R): 45 degrees at f = R / (2 pi L)
    phase = np.angle(-1.0 / i, deg=True)
    np.testing.assert_allclose(phase, np.degrees(np.arctan2(2 * np.pi * f * 1e-3, 10.0)), atol=1e-6)


def test_several_analyses_give_several_plots() -> None:
    deck = """op and ac
V1 in 0 DC 2 AC 1
R1 in a 1k
R2 a 0 1k
.op
.ac lin 3 1k 3k
.end
"""
    result = run_ngspice(deck)
    names = [p.name.lower() for p in result.plots]
    assert any("operating point" in n for n in names) and any("ac" in n for n in names)
    # divider by two: 1 V at DC, 0.5 V (relative) in AC
    assert result.plot("operating point").vector("a")[0] == pytest.approx(1.0, rel=1e-9)
    np.testing.assert_allclose(np.abs(result.plot("ac").vector("a")), 0.5, rtol=1e-9)


def test_ascii_raw_file_reads_the_same_as_binary(monkeypatch: pytest.MonkeyPatch) -> None:
    """ngspice writes an ASCII raw file when SPICE_ASCIIRAWFILE=1 (ngspice
    manual, environment variables); both must read to the same numbers (ASCII
    carries 16 significant digits)."""
    deck = """rl ac
V1 in 0 AC 1
R1 in a 10
L1 a 0 1m
.ac dec 4 10 1e5
.tran 1u 20u
.end
"""
    binary = run_ngspice(deck)
    monkeypatch.setenv("SPICE_ASCIIRAWFILE", "1")
    ascii_ = run_ngspice(deck)
    assert [p.name for p in ascii_.plots] == [p.name for p in binary.plots]
    for pa, pb in zip(ascii_.plots, binary.plots, strict=True):
        assert list(pa.vectors) == list(pb.vectors)
        for key in pb.vectors:
            np.testing.assert_allclose(pa.vectors[key], pb.vectors[key], rtol=1e-14, atol=1e-300)


def test_relative_include_resolves_against_base_dir(tmp_path) -> None:
    (tmp_path / "parts.lib").write_text("R2 a 0 3k\n")
    deck = "divider\nV1 in 0 4\nR1 in a 1k\n.include parts.lib\n.op\n.end\n"
    result = run_ngspice(deck, base_dir=tmp_path)
    assert result.vector("a")[0] == pytest.approx(3.0, rel=1e-9)
    with pytest.raises(SimulationError, match="Could not find include file parts.lib"):
        run_ngspice(deck, name="divider.cir")


def test_an_error_in_the_deck_quotes_ngspice() -> None:
    deck = "bad card\nV1 in 0 1\nR1 in 0 1\nR1 in 0 2\n.op\n.end\n"
    with pytest.raises(SimulationError) as info:
        run_ngspice(deck, name="bad.cir")
    text = str(info.value)
    assert text.startswith("bad.cir: error: ngspice failed (exit code 1)")
    assert "Error on line 4" in text
    assert "r1 in 0 2" in text
    assert "device already exists" in text


def test_unknown_model_is_an_error() -> None:
    deck = "bad model\nV1 in 0 1\nQ1 in 0 0 nomodel\n.op\n.end\n"
    with pytest.raises(SimulationError, match=r"(?s)bad2\.cir.*could not find a valid modelname"):
        run_ngspice(deck, name="bad2.cir")


def test_coupling_above_one_is_not_positive_definite() -> None:
    """ngspice exits 0 with |k| > 1 (see the notes on ngspice 39); the runner
    must still fail, quoting ngspice's message."""
    deck = """k too large
V1 in 0 PULSE(0 1 0 1n 1n 1 2)
R1 in a 1
L1 a 0 1u
L2 b 0 1u
R2 b 0 1
K1 L1 L2 1.5
.tran 1n 1u
.end
"""
    with pytest.raises(SimulationError, match=r"(?s)k\.cir.*not positive definite.*\|k1\| > 1"):
        run_ngspice(deck, name="k.cir")


def test_coupling_to_a_missing_inductor_is_fatal() -> None:
    deck = "k\nV1 in 0 1\nR1 in a 1\nL1 a 0 1u\nK1 L1 L9 0.5\n.tran 1n 10n\n.end\n"
    with pytest.raises(SimulationError, match="coupling to non-existant inductor l9"):
        run_ngspice(deck)


def test_non_convergence_fails() -> None:
    """Two ideal voltage sources in parallel with different values: no
    solution; ngspice says 'Timestep too small' and exits 1."""
    deck = "loop\nV1 in 0 1\nV2 in 0 2\nR1 in 0 1\n.tran 1n 1u\n.end\n"
    with pytest.raises(SimulationError, match="(?i)timestep too small"):
        run_ngspice(deck)


def test_incomplete_coupling_set_is_a_warning_not_a_failure() -> None:
    deck = """three coupled, two K
V1 in 0 PULSE(0 1 0 1n 1n 1 2)
R1 in a 1
L1 a 0 1u
L2 b 0 1u
L3 c 0 1u
R2 b 0 1
R3 c 0 1
K1 L1 L2 0.5
K2 L2 L3 0.5
.tran 1n 10n
.end
"""
    result = run_ngspice(deck)
    assert any("incomplete set of K couplings" in w for w in result.warnings)
    assert len(result.scale) > 5


def test_deck_without_analysis_is_an_error() -> None:
    with pytest.raises(SimulationError, match=r"empty\.cir: error: ngspice wrote no waveforms"):
        run_ngspice("nothing\nV1 in 0 1\nR1 in 0 1\n.end\n", name="empty.cir")


def test_timeout_stops_ngspice() -> None:
    deck = """long run
V1 in 0 PULSE(0 1 0 1n 1n 50n 100n)
R1 in a 1
L1 a b 1u
C1 b 0 1n
.tran 0.1n 20m
.end
"""
    with pytest.raises(SimulationError, match=r"long\.cir: error: ngspice did not finish within 0\.5 s"):
        run_ngspice(deck, timeout=0.5, name="long.cir")


def test_progress_reports_the_simulated_time() -> None:
    deck = """progress
V1 in 0 PULSE(0 1 0 1n 1n 50n 100n)
R1 in a 1
L1 a b 1u
C1 b 0 1n
.tran 0.1n 60u
.end
"""
    seen: list[float] = []
    result = run_ngspice(deck, progress=seen.append, poll_interval=0.02)
    assert seen, "the run was too short to report progress"
    assert all(0.0 <= s <= 60e-6 for s in seen)
    assert seen == sorted(seen)
    assert result.scale[-1] == pytest.approx(60e-6)


def test_raw_reader_rejects_garbage() -> None:
    with pytest.raises(SimulationError, match="ends inside a header"):
        read_raw_bytes(b"Title: x\nPlotname: y\n", name="x.raw")
    with pytest.raises(SimulationError, match="No. Variables"):
        read_raw_bytes(b"Title: x\nVariables:\n\t0\ttime\ttime\nBinary:\n", name="x.raw")
