"""The MOSFETs and diodes of a netlist, inside subcircuit instances too.

Switch models usually come as ``.subckt`` definitions (a MOSFET with its body
diode and package parts); the ring capacitance is read from the devices
inside. Each device inside an instance gets the nodes it has in the
simulation: a port is the node the instance connects it to; an internal node
is named as ngspice names it, ``<instance>.<node>`` (lower case, nested
instances chained: ``x2.x1.di``); ground and ``.global`` nodes keep their names.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from parasite.errors import ParasiteError

MAX_DEPTH = 20  # nested instances followed (a recursive definition stops here)


@dataclass(frozen=True)
class Device:
    """A device as simulated: ``name`` with its instance path (``X2.M1``),
    ``letter`` (``M``, ``D``), ``nodes`` in the simulation's names, ``model``
    (lower case), and the card's ``file`` and ``line``."""

    name: str
    letter: str
    nodes: tuple[str, ...]
    model: str | None
    file: str
    line: int


def _bodies(netlist: Any) -> dict[str, list[Any]]:
    """Lower-case subcircuit name -> the element cards of its body (read-only
    use of the reader's result)."""
    out: dict[str, list[Any]] = {}
    for card in netlist._result.elements:
        if card.scope is not None:
            out.setdefault(card.scope.name.lower(), []).append(card)
    return out


def devices(netlist: Any, letters: tuple[str, ...] = ("M", "D")) -> list[Device]:
    """Every element with a letter in ``letters``, at top level and inside
    the subcircuit instances (recursively), with simulation node names."""
    bodies = _bodies(netlist)
    subckts = netlist.subckts
    glob = {"0", "gnd"} | {g.lower() for g in getattr(netlist._result, "global_nodes", set())}
    found: list[Device] = []

    def walk(elements: list[Any], mapping: dict[str, str] | None, prefix: str,
             path: str, depth: int) -> None:
        for el in elements:
            if mapping is None:
                nodes = tuple(el.nodes)
            else:
                nodes = tuple(n if n in glob else mapping.get(n, f"{prefix}{n}")
                              for n in el.nodes)
            if el.letter in letters:
                found.append(Device(f"{path}{el.name}", el.letter, nodes, el.model,
                                    el.file, el.line))
            elif el.letter == "X" and el.subckt and depth < MAX_DEPTH:
                definition = subckts.get(el.subckt)
                body = bodies.get(el.subckt)
                if definition is None or body is None:
                    continue
                inner = dict(zip(definition.ports, nodes, strict=False))
                children = []
                for card in body:
                    try:
                        children.append(netlist._element_of(card))
                    except ParasiteError:
                        continue
                walk(children, inner, f"{prefix}{el.name.lower()}.", f"{path}{el.name}.",
                     depth + 1)

    walk(netlist.elements, None, "", "", 0)
    return found
