"""Board nets to netlist nodes, through the pads.

A footprint whose reference designator names a netlist element (``R5`` is
``R5``; a subcircuit instance ``XU1`` is also found from the footprint ``U1``)
maps each of its pads to one terminal of the element: by a pin-map table when
one is given for that reference (pad number -> terminal name or 1-based
position), else by position (pad ``2`` is the element's second node). That
pad's board net is then the terminal's node. A board net that meets two
different nodes is an error naming both pads.

Without a netlist, every board net gets a node name made from its own name
(:func:`node_name_from`): lower case, characters other than ``a-z 0-9 _``
replaced by ``_``.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from geometry.kicad.board import Board, Pad
from geometry.kicad.errors import BoardError
from geometry.model import canonical_net


@dataclass(frozen=True)
class ElementInfo:
    """What the mapping needs of a netlist element: its name as written, its
    nodes in card order and their terminal names (lower case)."""

    name: str
    nodes: tuple[str, ...]
    terminal_names: tuple[str, ...]


@dataclass(frozen=True)
class PadTerminal:
    pad: Pad
    element: ElementInfo
    index: int  # 0-based terminal position

    @property
    def terminal(self) -> str:
        """The terminal as the routes file writes it, e.g. ``M1:d``."""
        names = self.element.terminal_names
        term = names[self.index] if self.index < len(names) and names[self.index] else str(self.index + 1)
        return f"{self.element.name}:{term}"

    @property
    def node(self) -> str:
        return canonical_net(self.element.nodes[self.index])


@dataclass
class NetMapping:
    nodes: dict[str, str] = field(default_factory=dict)  # board net -> node
    terminals: list[PadTerminal] = field(default_factory=list)  # matched pads
    notes: list[str] = field(default_factory=list)


def node_name_from(board_net: str, taken: set[str]) -> str:
    """A node name made from a board net's name (never one in ``taken``)."""
    base = re.sub(r"[^a-z0-9_]", "_", board_net.lower()).strip("_") or "net"
    if base[0].isdecimal() and base != "0":
        base = "n" + base
    name, k = base, 2
    while canonical_net(name) in taken:
        name, k = f"{base}_{k}", k + 1
    taken.add(canonical_net(name))
    return name


def read_pin_map(path: str | Path) -> dict[str, dict[str, str]]:
    """A pin-map side file (TOML): one table per reference designator, pad
    number -> terminal name or 1-based position, e.g. ``[M1]`` ``"1" = "g"``."""
    try:
        import tomllib
    except ImportError:  # Python 3.10
        import tomli as tomllib  # type: ignore[no-redef]

    try:
        data: Any = tomllib.loads(Path(path).read_text(encoding="utf-8"))
    except OSError as exc:
        raise BoardError(f"cannot read the pin map: {exc.strerror or exc}", file=str(path)) from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise BoardError(f"not a valid TOML pin map: {exc}", file=str(path)) from None
    out: dict[str, dict[str, str]] = {}
    for ref, table in data.items():
        if not isinstance(table, dict):
            raise BoardError("each reference designator needs a table of pad number = terminal",
                             file=str(path), key=ref)
        for pad, term in table.items():
            if not isinstance(term, str | int) or isinstance(term, bool):
                raise BoardError(f"terminal must be a name or a position, got {term!r}",
                                 file=str(path), key=f"{ref}.{pad}")
        out[ref.lower()] = {str(k): str(v).lower() for k, v in table.items()}
    return out


def _element_for(reference: str, elements: Mapping[str, ElementInfo]) -> ElementInfo | None:
    key = reference.lower()
    if key in elements:
        return elements[key]
    return elements.get("x" + key)


def _terminal_index(pad: Pad, element: ElementInfo, pin_map: Mapping[str, Mapping[str, str]],
                    map_file: str | None) -> int | None:
    table = pin_map.get(pad.reference.lower())
    if table is not None:
        if pad.number not in table:
            return None
        term = table[pad.number]
        if term.isdecimal() and 1 <= int(term) <= len(element.nodes):
            return int(term) - 1
        if term in element.terminal_names:
            return element.terminal_names.index(term)
        raise BoardError(f"{element.name} has no terminal {term!r} (its terminals: "
                         f"{', '.join(element.terminal_names)})", file=map_file,
                         key=f"{pad.reference}.{pad.number}")
    if pad.number.isdecimal() and 1 <= int(pad.number) <= len(element.nodes):
        return int(pad.number) - 1
    return None


def map_nets(board: Board, elements: Mapping[str, ElementInfo],
             pin_map: Mapping[str, Mapping[str, str]], map_file: str | None = None) -> NetMapping:
    """Board net -> netlist node through the matched pads; raises
    :class:`BoardError` (board file, pad's line) for a board net on two nodes."""
    out = NetMapping()
    first: dict[str, PadTerminal] = {}
    unmatched_refs: set[str] = set()
    for pad in board.pads:
        element = _element_for(pad.reference, elements)
        if element is None:
            if pad.reference:
                unmatched_refs.add(pad.reference)
            continue
        index = _terminal_index(pad, element, pin_map, map_file)
        if index is None:
            out.notes.append(f"pad {pad.reference}.{pad.number} (line {pad.line}) maps to no "
                             f"terminal of {element.name}")
            continue
        pt = PadTerminal(pad, element, index)
        if not pad.net:
            out.notes.append(f"pad {pad.reference}.{pad.number} (line {pad.line}) is on no board net")
            continue
        seen = first.get(pad.net)
        if seen is not None and seen.node != pt.node:
            raise BoardError(
                f"board net {pad.net!r} joins two different netlist nodes: pad "
                f"{seen.pad.reference}.{seen.pad.number} (line {seen.pad.line}) is terminal "
                f"{seen.terminal} on node {seen.node!r}, pad {pad.reference}.{pad.number} is "
                f"terminal {pt.terminal} on node {pt.node!r}", file=board.path, line=pad.line)
        first.setdefault(pad.net, pt)
        out.nodes[pad.net] = pt.node
        out.terminals.append(pt)
    by_node: dict[str, str] = {}
    for net, node in out.nodes.items():
        if node in by_node:
            out.notes.append(f"board nets {by_node[node]!r} and {net!r} are both node {node!r} in "
                             f"the netlist (joined there, apart on the board)")
        by_node.setdefault(node, net)
    if unmatched_refs:
        out.notes.append("footprints not in the netlist (their pads get no pins): "
                         + ", ".join(sorted(unmatched_refs)))
    return out
