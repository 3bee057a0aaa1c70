"""Cross-check of the routes file's pins against the netlist.

A pin's net is the netlist node of its terminal (``M1:d`` -> the node on
``M1``'s drain). Terminal names follow the element-kind table of the netlist
reader (``R1:1``, ``M1:d``, ``M1:1``, subcircuit ports by name), so two pins
that name one terminal in different ways (``M1:d`` and ``m1:1``) are
duplicates.

* :func:`resolve_pin_nets` -> the net of every pin, in pin order (the input of
  :func:`geometry.graph.build_graph`);
* :func:`resolve_pins` -> the same plus, for each ``[nets.NAME] anchor``, the
  index of the pin that places it (``build_graph(..., anchor_pins=...)``), so
  that an anchor may be spelled differently from its pin.

Errors are :class:`geometry.errors.RoutesError` naming the routes file and the
key path (``pin[2].terminal``, ``nets.vin.anchor``); the netlist's own message
says what the element accepts.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Protocol

from geometry.errors import RoutesError
from geometry.model import Routes, canonical_net
from parasite.errors import NetlistError


class NetlistLike(Protocol):
    """The part of :class:`parasite.netlist.Netlist` used here."""

    def element(self, name: str) -> Any: ...

    def terminal_index(self, name: str, terminal: str) -> int: ...

    def terminal_node(self, name: str, terminal: str) -> str: ...


@dataclass(frozen=True)
class PinResolution:
    nets: list[str]  # net of routes.pins[i] (canonical: lower-case, gnd -> 0)
    anchor_pins: dict[str, int]  # net -> index of the pin placing its [nets.NAME] anchor


def _lookup(netlist: NetlistLike, routes: Routes, terminal: str, element: str, term: str,
            key: str, line: int | None) -> tuple[int, str]:
    try:
        netlist.element(element)
        index = netlist.terminal_index(element, term)
        node = netlist.terminal_node(element, term)
    except NetlistError as exc:
        where = f" (netlist {exc.file})" if exc.file else ""
        raise RoutesError(f"terminal {terminal!r}: {exc.message}{where}", file=routes.path,
                          line=line, key=key) from None
    return index, canonical_net(node)


def resolve_pins(routes: Routes, netlist: NetlistLike) -> PinResolution:
    """Nets of the pins and the pins placing the anchors; raises
    :class:`RoutesError` for an unknown element or terminal, two pins on one
    terminal, an anchor on another net or placed by no pin."""
    nets: list[str] = []
    placed: dict[tuple[str, int], int] = {}  # (element, terminal index) -> pin index
    for i, pin in enumerate(routes.pins):
        key = f"pin[{i}].terminal"
        index, node = _lookup(netlist, routes, pin.terminal, pin.element, pin.term, key, pin.line)
        if (pin.element, index) in placed:
            first = routes.pins[placed[(pin.element, index)]]
            raise RoutesError(
                f"duplicate pin: {pin.terminal!r} is the terminal that pin[{first.index}] "
                f"already places as {first.terminal!r}; each terminal has one pin",
                file=routes.path, line=pin.line, key=key)
        placed[(pin.element, index)] = i
        nets.append(node)
    anchor_pins: dict[str, int] = {}
    for net, opts in routes.nets.items():
        if opts.anchor is None:
            continue
        key = f"nets.{net}.anchor"
        elem, _, term = opts.anchor.strip().rpartition(":")
        elem, term = elem.strip().lower(), term.strip().lower()
        index, node = _lookup(netlist, routes, opts.anchor, elem, term, key, opts.line)
        if node != net:
            raise RoutesError(
                f"the anchor {opts.anchor!r} is on net {node!r} in the netlist, not on net "
                f"{net!r}; name a terminal of net {net!r}", file=routes.path, line=opts.line,
                key=key)
        if (elem, index) not in placed:
            pins = ", ".join(repr(routes.pins[k].terminal) for k, n in enumerate(nets) if n == net)
            raise RoutesError(
                f"the anchor {opts.anchor!r} of net {net!r} is not placed by any [[pin]]; "
                f"pins of net {net!r}: {pins or 'none'}", file=routes.path, line=opts.line,
                key=key)
        anchor_pins[net] = placed[(elem, index)]
    return PinResolution(nets=nets, anchor_pins=anchor_pins)


def resolve_pin_nets(routes: Routes, netlist: NetlistLike) -> list[str]:
    """The net of every pin of ``routes``, in pin order (see :func:`resolve_pins`)."""
    return resolve_pins(routes, netlist).nets
