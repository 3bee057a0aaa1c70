"""``[[probe]]`` entries: loading, validation and their place in the copper
graph. Expected numbers are worked out by hand from the fixtures' coordinates
(stated beside each check); the instrument presets are checked against the
values the docs give as common practice."""

from __future__ import annotations

import math
from typing import Literal

import pytest

from geometry.errors import RoutesError
from geometry.graph import build_graph
from geometry.model import INSTRUMENT_PRESETS, Routes
from geometry.routes import load_routes, parse_routes
from tests.boards import ROOT

ROOT = ROOT
FIXTURE = ROOT / "fixtures" / "routes" / "probe_resistor.routes.toml"
PIN_NETS = ["a", "a", "b", "b", "0", "0"]
MM = 1e-3

BASE = FIXTURE.read_text()
PROBE_AT = BASE.index("[[probe]]")
HEAD = BASE[:PROBE_AT]
PROBE = BASE[PROBE_AT:]


def _parse(text: str, fmt: Literal["toml", "json"] = "toml") -> Routes:
    return parse_routes(text.encode(), "p.routes.toml", fmt)


def _with(old: str, new: str) -> str:
    assert old in PROBE, old
    return HEAD + PROBE.replace(old, new)


def test_probe_loaded_in_si() -> None:
    """Points in mm become metres; the contact's layer top face is 1.565 + 0.035
    = 1.6 mm; the 10x preset is 10 Mohm || 12 pF."""
    r = load_routes(FIXTURE)
    (p,) = r.probes
    assert p.name == "p1" and p.index == 0 and p.line == 61
    assert p.tip.layer == "top" and p.tip.at == pytest.approx((9 * MM, 0.2 * MM))
    assert p.tip.net is None and p.ground.net == "b"
    assert p.tip_lead.radius == pytest.approx(0.2 * MM)
    assert p.tip_lead.points[0] == pytest.approx((9 * MM, 0.2 * MM, 1.6 * MM))
    assert p.ground_lead.points[-1] == pytest.approx((11.5 * MM, 0.0, 10 * MM))
    assert p.instrument.resistance == 10e6 and p.instrument.capacitance == 12e-12
    assert p.instrument.preset == "10x"


def test_presets_within_common_practice() -> None:
    """10x passive probe: 10 Mohm at the tip, 8-15 pF; 1x: 1 Mohm, 50-110 pF
    with the cable (common practice, from memory; see docs/probes.md)."""
    p10, p1 = INSTRUMENT_PRESETS["10x"], INSTRUMENT_PRESETS["1x"]
    assert p10.resistance == 10e6 and 8e-12 <= p10.capacitance <= 15e-12
    assert p1.resistance == 1e6 and 50e-12 <= p1.capacitance <= 110e-12


def test_instrument_given_as_values() -> None:
    r = _parse(_with('instrument = "10x"',
                     'instrument = { resistance = "1meg", capacitance = 15e-12 }'))
    ins = r.probes[0].instrument
    assert ins.resistance == pytest.approx(1e6) and ins.capacitance == pytest.approx(15e-12)
    assert ins.preset is None
    assert _parse(_with('instrument = "10x"', 'instrument = "1X"')).probes[0].instrument.preset == "1x"


def test_json_equivalent() -> None:
    """The same probe written in JSON loads the same."""
    import json

    from geometry.routes import tomllib

    data = tomllib.loads(BASE)
    r_json = _parse(json.dumps(data), "json")
    assert r_json.probes[0].tip_lead == load_routes(FIXTURE).probes[0].tip_lead


BAD: dict[str, tuple[str, str, str, str]] = {
    # case: (old, new, key path, message regex)
    "unknown key": ('instrument = "10x"', 'instrument = "10x"\nlenght = 3',
                    "probe[0].lenght", r"unknown key 'lenght'; accepted keys here: name, tip"),
    "unknown contact key": ('at = [9, 0.2] }', 'at = [9, 0.2], side = 1 }',
                            "probe[0].tip.side", r"unknown key 'side'; accepted keys here: layer, at, net"),
    "missing lead": ('tip_lead = { points = [[9, 0.2, 1.6], [9, 0.2, 10], [11, 0.2, 10]], radius = 0.2 }\n',
                     "", "probe[0]", r"missing required key 'tip_lead'"),
    "zero radius": ("[11, 0.2, 10]], radius = 0.2", "[11, 0.2, 10]], radius = 0",
                    "probe[0].tip_lead.radius", r"must be a positive length in mm; got 0"),
    "lead off its contact": ("[[13, 0, 1.6], [13, 0, 10]", "[[13, 0, 1.2], [13, 0, 10]",
                             "probe[0].ground_lead.points[0]",
                             r"the first point must be \[13, 0, 1\.6\] \(ground\.at on the top face "
                             r"of layer 'top'\); got \[13, 0, 1\.2\]"),
    "2-D point": ("[9, 0.2, 10], [11, 0.2, 10]]", "[9, 0.2, 10], [11, 0.2]]",
                  "probe[0].tip_lead.points[2]", r"must be a point in space \[x, y, z\] in mm; "
                                                 r"got an array of 2 items"),
    "one point": ("points = [[13, 0, 1.6], [13, 0, 10], [11.5, 0, 10]]", "points = [[13, 0, 1.6]]",
                  "probe[0].ground_lead.points", r"at least two points \[x, y, z\].*got 1"),
    "zero-length": ("[9, 0.2, 10], [11, 0.2, 10]]", "[9, 0.2, 10], [9, 0.2, 10]]",
                    "probe[0].tip_lead.points[2]", r"zero-length segment"),
    "unknown preset": ('instrument = "10x"', 'instrument = "100x"', "probe[0].instrument",
                       r"unknown instrument '100x'; accepted: '10x', '1x', or a table"),
    "bad capacitance": ('instrument = "10x"', 'instrument = { resistance = 1e6, capacitance = -1 }',
                        "probe[0].instrument.capacitance", r"positive number in F .*got -1"),
    "bad name": ('name = "p1"', 'name = "p 1"', "probe[0].name",
                 r"letters, digits, '_' and '-' only .*got 'p 1'"),
    "unknown layer": ('tip = { layer = "top"', 'tip = { layer = "tpo"', "probe[0].tip.layer",
                      r"unknown layer 'tpo'"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_probe(case: str) -> None:
    old, new, key, msg = BAD[case]
    with pytest.raises(RoutesError, match=msg) as info:
        _parse(_with(old, new))
    assert info.value.key == key
    assert info.value.file == "p.routes.toml" and info.value.line is not None


def test_duplicate_probe_names() -> None:
    text = HEAD + PROBE + PROBE.replace('name = "p1"', 'name = "P1"')
    with pytest.raises(RoutesError, match=r"duplicate probe name 'P1' \(also probe\[0\]"):
        _parse(text)


def test_graph_of_the_probe() -> None:
    """Tip contact (9, 0.2) splits trace a at (9, 0): pieces 9 mm and 1 mm; the
    ground contact (13, 0) splits trace b: 1 mm and 9 mm. Each lead is two
    segments: 8.4 mm up (1.6 to 10 mm), then 2 mm (tip) or 1.5 mm (ground)
    along x. Leads start on their contact nodes, have their own nets and end on
    nodes of their own; they sit above the plane in1, imaged at its top face,
    1.235 mm."""
    g = build_graph(load_routes(FIXTURE), PIN_NETS)
    trace_lengths = sorted(round(s.length / MM, 9) for s in g.segments if s.kind == "trace")
    assert trace_lengths == [1, 1, 9, 9]
    leads = [s for s in g.segments if s.kind == "probe"]
    assert [s.id for s in leads] == ["probe:p1:tip.1", "probe:p1:tip.2", "probe:p1:ground.1",
                                     "probe:p1:ground.2"]
    assert [s.length / MM for s in leads] == pytest.approx([8.4, 2.0, 8.4, 1.5])
    assert all(s.layer is None and s.radius == pytest.approx(0.2 * MM)
               and s.inner_radius == 0 and s.width == pytest.approx(0.4 * MM) for s in leads)
    tip_contact = g.nodes[leads[0].node_from]
    gnd_contact = g.nodes[leads[2].node_from]
    assert tip_contact.net == "a" and tip_contact.point[:2] == pytest.approx((9 * MM, 0.0))
    assert gnd_contact.net == "b" and gnd_contact.point[:2] == pytest.approx((13 * MM, 0.0))
    assert leads[0].node_to == leads[1].node_from and leads[2].node_to == leads[3].node_from
    ends = {leads[1].node_to, leads[3].node_to}
    assert {g.nodes[n].net for n in ends} == {"probe:p1:tip", "probe:p1:ground"}
    assert all(g.nodes[n].layer is None for n in ends)
    assert g.nets[-2:] == ("probe:p1:tip", "probe:p1:ground")
    for s in leads:
        assert g.nets[int(g.arrays.net_index[s.index])] == s.net
        assert g.arrays.round[s.index]
        assert g.arrays.mirror_z[s.index] == pytest.approx(1.235 * MM)
    assert g.warnings == ()


def test_contact_on_a_via_and_on_a_plane() -> None:
    """A contact within a via's barrel joins the via's node; a contact on a plane
    layer joins the plane node."""
    text = HEAD + """
[[via]]
net = "0"
at = [5, 3]
from = "top"
to = "in1"
diameter = 0.6
"""
    probe = PROBE.replace("at = [13, 0], net = \"b\" }", "at = [5.2, 3.1] }").replace(
        "[[13, 0, 1.6], [13, 0, 10], [11.5, 0, 10]]", "[[5.2, 3.1, 1.6], [11.5, 0, 10]]")
    g = build_graph(_parse(text + probe), PIN_NETS)
    lead = next(s for s in g.segments if s.source == "probe[0].ground_lead")
    via = next(s for s in g.segments if s.kind == "via")
    assert lead.node_from == via.node_from and g.nodes[lead.node_from].net == "0"
    # on the plane layer in1 (top face 1.2 + 0.035 = 1.235 mm)
    probe2 = PROBE.replace('ground = { layer = "top", at = [13, 0], net = "b" }',
                           'ground = { layer = "in1", at = [5, 5] }').replace(
        "[[13, 0, 1.6], [13, 0, 10], [11.5, 0, 10]]", "[[5, 5, 1.235], [11.5, 0, 10]]")
    g2 = build_graph(_parse(HEAD + probe2), PIN_NETS)
    lead2 = next(s for s in g2.segments if s.source == "probe[0].ground_lead")
    assert g2.nodes[lead2.node_from].plane and g2.nodes[lead2.node_from].net == "0"


def test_contact_errors() -> None:
    """Off copper, on copper of another net than the one named, on copper that
    no pin connects to the circuit: errors naming the probe's key path."""
    off = PROBE.replace("at = [9, 0.2] }", "at = [9, 0.7] }").replace("[9, 0.2, 1.6]", "[9, 0.7, 1.6]")
    with pytest.raises(RoutesError, match=r"probe\[0\]\.tip\.at: the tip contact of probe 'p1' at "
                                          r"\[9, 0\.7\] mm on layer 'top' lies on no copper;"):
        build_graph(_parse(HEAD + off), PIN_NETS)
    wrong = PROBE.replace('at = [13, 0], net = "b" }', 'at = [13, 0], net = "a" }')
    with pytest.raises(RoutesError, match=r"probe\[0\]\.ground\.at: .* lies on no copper of net 'a'"):
        build_graph(_parse(HEAD + wrong), PIN_NETS)
    island = HEAD + '[[trace]]\nnet = "c"\nlayer = "top"\nwidth = 1.0\npoints = [[0, 20], [10, 20]]\n\n'
    on_island = PROBE.replace('at = [13, 0], net = "b" }', "at = [5, 20] }").replace(
        "[[13, 0, 1.6], [13, 0, 10], [11.5, 0, 10]]", "[[5, 20, 1.6], [11.5, 0, 10]]")
    with pytest.raises(RoutesError, match=r"probe\[0\]\.ground\.at: the ground contact of probe 'p1' "
                                          r"lies on copper of net 'c' that no pin connects"):
        build_graph(_parse(island + on_island), PIN_NETS)


def test_lead_segment_directions() -> None:
    """Lead segments point from the contact toward the instrument (the sign
    convention of their mutual terms)."""
    g = build_graph(load_routes(FIXTURE), PIN_NETS)
    tip = [s for s in g.segments if s.source == "probe[0].tip_lead"]
    assert tip[0].start[2] < tip[0].end[2]
    assert tip[1].end[0] - tip[1].start[0] == pytest.approx(2 * MM)
    assert math.isclose(sum(s.length for s in tip), 10.4 * MM)
