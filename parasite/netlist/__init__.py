"""Reading and writing ngspice-dialect SPICE netlists without losing a byte.

    from parasite.netlist import read_netlist
    net = read_netlist("buck.cir")
    net.terminal_node("M1", "d")        # -> "vin"
    net.rename_terminal("M1", "d", "vin_m1")
    data = net.to_bytes()

Modules: ``lines`` (physical lines, comments, continuation, logical cards),
``tokens`` (fields of a card and their place in the lines), ``kinds`` (the one
table of element kinds and the rules that find nodes), ``reader`` (cards,
includes, subcircuits, models), ``netlist`` (the API), ``names`` (node names).
"""

from __future__ import annotations

from parasite.netlist.kinds import ELEMENT_KINDS, ElementKind
from parasite.netlist.names import canonical_node
from parasite.netlist.netlist import Netlist, parse_netlist, read_netlist
from parasite.netlist.records import Element, Model, Subckt

__all__ = [
    "ELEMENT_KINDS",
    "Element",
    "ElementKind",
    "Model",
    "Netlist",
    "Subckt",
    "canonical_node",
    "parse_netlist",
    "read_netlist",
]
