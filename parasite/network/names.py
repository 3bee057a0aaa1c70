"""Netlist names of the copper network's nodes.

Every node of the copper graph gets a name that the augmented netlist, the
report and the probe readings share: a net's anchor keeps the net's name, a
probe's lead ends are ``probe_<name>_tip`` / ``probe_<name>_gnd``, every other
node is ``<net>_<n>`` in node order (:class:`parasite.naming.NameAllocator`
keeps them clear of the netlist's own names).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from parasite.naming import NameAllocator, sanitize
from parasite.network.ports import probe_nodes

if TYPE_CHECKING:
    from geometry.model import CopperGraph, Instrument


def node_names(graph: CopperGraph, allocator: NameAllocator) -> dict[int, str]:
    """A netlist node name for every node of the copper graph: the anchor keeps
    its net's name, the others are ``<net>_<n>`` in node order."""
    names: dict[int, str] = {}
    for net, anchor in graph.anchors.items():
        names[anchor] = allocator.take(net)
    names.update(end_node_names(graph, allocator))  # probe_<name>_tip / _gnd
    counters: dict[str, int] = {}
    for gnode in graph.nodes:
        if gnode.id in names:
            continue
        base = sanitize(gnode.net)
        if not base[0].isalpha():
            base = "n" + base
        counters[gnode.net] = counters.get(gnode.net, 0) + 1
        names[gnode.id] = allocator.new(f"{base}_{counters[gnode.net]}")
    return names


def end_node_names(graph: CopperGraph, allocator: NameAllocator) -> dict[int, str]:
    """Netlist names of the lead ends: ``probe_<name>_tip`` (the reading's plus
    side) and ``probe_<name>_gnd`` (its minus side), made unique by ``allocator``.

    For an instrument with a ``damping`` resistance the name of the node inside
    the input (between that resistance and the R || C), ``<tip name>_in``
    (:func:`inner_node_name`), is reserved too: the tip's name is chosen so that
    both are free."""
    names: dict[int, str] = {}
    for pn in probe_nodes(graph):
        base = sanitize(pn.probe.name)
        tip = allocator.new(f"probe_{base}_tip")
        if pn.probe.instrument.damping > 0:
            # allocator.new returns its argument only when that name is free (and reserves it)
            while allocator.new(inner_node_name(tip)) != inner_node_name(tip):
                tip = allocator.new(f"probe_{base}_tip")
        names[pn.tip_end] = tip
        names[pn.ground_end] = allocator.new(f"probe_{base}_gnd")
    return names


def inner_node_name(tip_name: str) -> str:
    """The node between an instrument's damping resistance and its R || C."""
    return f"{tip_name}_in"


def reading_plus(tip_name: str, instrument: Instrument) -> str:
    """The plus node of the reading: the tip lead's end, or for an instrument
    with a damping resistance the node behind it (the reading is the voltage
    across the R || C, as the instrument sees it, not across the damping
    resistance too: that would add ``damping * C dV/dt`` on every edge)."""
    return inner_node_name(tip_name) if instrument.damping > 0 else tip_name
