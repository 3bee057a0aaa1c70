"""Cross-check of pins against the netlist: the net of each pin, duplicates,
anchors. Expected nets are read off the netlist cards by hand."""

from __future__ import annotations

import re

import pytest

from geometry.errors import RoutesError
from geometry.graph import build_graph
from geometry.routes import load_routes, parse_routes
from parasite.errors import NetlistError
from parasite.netlist import read_netlist
from parasite.pins import resolve_pin_nets, resolve_pins
from tests.boards import ROOT

ROOT = ROOT

HEAD = """format = "parasite-routes/1"
units = "mm"
[layers.top]
z = 1.5
thickness = 0.035
"""


def routes_with(pins: list[str], extra: str = "", name: str = "t.routes.toml"):
    body = HEAD + extra
    for k, term in enumerate(pins):
        body += f'[[pin]]\nterminal = "{term}"\nat = [{k}, 0]\nlayer = "top"\n'
    return parse_routes(body.encode(), name, "toml")


class FakeNetlist:
    """Terminal names of the routes-file spec's table, for a hand-written
    circuit: M1 vin g1 sw; R1 a b; V1 vin 0."""

    names = {"m": ("d", "g", "s", "b"), "r": ("1", "2"), "v": ("p", "n")}
    aliases = {"r": {"p": 0, "n": 1}}
    cards = {"m1": ("vin", "g1", "sw"), "r1": ("a", "b"), "v1": ("vin", "GND")}

    def element(self, name: str) -> str:
        if name.lower() not in self.cards:
            raise NetlistError(f"no element named {name!r}", file="fake.cir")
        return name

    def terminal_index(self, name: str, terminal: str) -> int:
        self.element(name)
        letter, nodes = name[0].lower(), self.cards[name.lower()]
        t = terminal.lower()
        names = self.names[letter][: len(nodes)]
        if t in names:
            return names.index(t)
        if t in self.aliases.get(letter, {}):
            return self.aliases[letter][t]
        if t.isdigit() and 1 <= int(t) <= len(nodes):
            return int(t) - 1
        raise NetlistError(f"element {name} has no terminal {terminal!r}", file="fake.cir", line=3)

    def terminal_node(self, name: str, terminal: str) -> str:
        return self.cards[name.lower()][self.terminal_index(name, terminal)]


def test_nets_from_a_fake_netlist() -> None:
    r = routes_with(["M1:d", "M1:G", "m1:3", "R1:n", "V1:n"])
    assert resolve_pin_nets(r, FakeNetlist()) == ["vin", "g1", "sw", "b", "0"]


def test_duplicate_terminal_spelled_two_ways() -> None:
    r = routes_with(["M1:d", "R1:1", "m1:1"])
    with pytest.raises(RoutesError, match=re.escape("t.routes.toml:14: error: pin[2].terminal: ")
                       + r"duplicate pin: 'm1:1' is the terminal that pin\[0\] already places "
                         r"as 'M1:d'"):
        resolve_pin_nets(r, FakeNetlist())


def test_unknown_element_and_terminal() -> None:
    with pytest.raises(RoutesError, match=re.escape("t.routes.toml:10: error: pin[1].terminal: ")
                       + r"terminal 'Q7:c': no element named 'q7' \(netlist fake\.cir\)"):
        resolve_pin_nets(routes_with(["M1:d", "Q7:c"]), FakeNetlist())
    with pytest.raises(RoutesError, match=r"pin\[0\]\.terminal: terminal 'M1:x': element m1 has "
                                          r"no terminal 'x'"):
        resolve_pin_nets(routes_with(["M1:x"]), FakeNetlist())


TRACE = """[nets.vin]
anchor = "{anchor}"
[[trace]]
net = "vin"
layer = "top"
width = 1
points = [[0, 0], [5, 0]]
"""


def test_anchor_spelled_like_another_terminal_of_its_pin() -> None:
    """Anchor "V1:1" is the terminal that the pin writes "V1:p"."""
    r = routes_with(["M1:d", "V1:p"], TRACE.format(anchor="V1:1"))
    res = resolve_pins(r, FakeNetlist())
    assert res.nets == ["vin", "vin"] and res.anchor_pins == {"vin": 1}
    g = build_graph(r, res.nets, anchor_pins=res.anchor_pins)
    assert g.anchors["vin"] == g.pins[1].node != g.pins[0].node


def test_anchor_errors() -> None:
    r = routes_with(["M1:d", "V1:p"], TRACE.format(anchor="M1:s"))
    with pytest.raises(RoutesError, match=re.escape("t.routes.toml:6: error: nets.vin.anchor: ")
                       + r"the anchor 'M1:s' is on net 'sw' in the netlist, not on net 'vin'"):
        resolve_pins(r, FakeNetlist())
    r = routes_with(["M1:d"], TRACE.format(anchor="V1:p"))
    with pytest.raises(RoutesError, match=r"nets\.vin\.anchor: the anchor 'V1:p' of net 'vin' is "
                                          r"not placed by any \[\[pin\]\]; pins of net 'vin': 'M1:d'"):
        resolve_pins(r, FakeNetlist())


def test_demo_pins_against_the_demo_netlist() -> None:
    """Nodes read off fixtures/demo/buck.cir: VIN vin 0; CIN1/CIN2 vin 0;
    M1 vin g1 sw; M2 sw g2 0; VDRV1 drv1 sw; RG1 drv1 g1; VDRV2 drv2 0;
    RG2 drv2 g2; IL1 sw out."""
    routes = load_routes(ROOT / "fixtures" / "demo" / "buck.routes.toml")
    res = resolve_pins(routes, read_netlist(ROOT / "fixtures" / "demo" / "buck.cir"))
    expected = {
        "VIN:p": "vin", "VIN:n": "0", "CIN1:1": "vin", "CIN1:2": "0", "CIN2:1": "vin",
        "CIN2:2": "0", "M1:d": "vin", "M1:s": "sw", "M1:g": "g1", "M2:d": "sw", "M2:s": "0",
        "M2:g": "g2", "IL1:p": "sw", "VDRV1:p": "drv1", "VDRV1:n": "sw", "RG1:1": "drv1",
        "RG1:2": "g1", "VDRV2:p": "drv2", "VDRV2:n": "0", "RG2:1": "drv2", "RG2:2": "g2",
    }
    assert dict(zip([p.terminal for p in routes.pins], res.nets, strict=True)) == expected
    assert res.anchor_pins == {"0": 1}


def test_real_netlist_positions_names_and_subcircuit_ports() -> None:
    """fixtures/netlists/half_bridge.cir: Mhigh bus gh mid; Mlow mid gl 0 tj_low
    tc_low (thermal VDMOS); Rgh gh_drv gh. nested_subckt.cir: X1 a out DIVCLAMP
    with ports (top bottom)."""
    hb = read_netlist(ROOT / "fixtures" / "netlists" / "half_bridge.cir")
    r = routes_with(["Mhigh:d", "MHIGH:s", "Mlow:3", "Rgh:2", "Vgh:n"])
    assert resolve_pin_nets(r, hb) == ["bus", "mid", "0", "gh", "mid"]
    ns = read_netlist(ROOT / "fixtures" / "netlists" / "nested_subckt.cir")
    r = routes_with(["X1:top", "x1:BOTTOM", "R1:2"])
    assert resolve_pin_nets(r, ns) == ["a", "out", "a"]
    with pytest.raises(RoutesError, match=r"pin\[0\]\.terminal: terminal 'X1:left': .*'left'"):
        resolve_pin_nets(routes_with(["X1:left"]), ns)
