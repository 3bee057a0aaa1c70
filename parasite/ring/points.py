"""Which point of the copper ``parasite ring`` reads: a node, or one
terminal of an element (``X2:d``), in the netlist as written and in the
augmented netlist, where the pins of one net are different points."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any


def resolve_node(netlist: Any, spec: str) -> tuple[str, tuple[str, str] | None]:
    """The node to read: a node name, or ``ELEMENT:TERMINAL`` (``X2:d``,
    ``M2:2``) for the node on that terminal of a top-level element. Returns
    the node and (element, terminal) when a terminal was named. Raises
    :class:`~parasite.errors.NetlistError` (file and line) for an unknown
    element or terminal."""
    spec = spec.strip()
    if ":" not in spec:
        return spec.lower(), None
    element, term = (p.strip() for p in spec.split(":", 1))
    node = netlist.terminal_node(element, term)
    return node, (netlist.element(element).name, term.lower())


def with_save(deck: bytes, node: str) -> bytes:
    """``deck`` with ``.save v(node)`` added when it has ``.save`` cards (which
    would leave the node out); unchanged when it has none (every node is saved)."""
    text = deck.decode("latin-1")
    if not re.search(r"^[ \t]*\.save\b", text, re.IGNORECASE | re.MULTILINE):
        return deck
    ends = list(re.finditer(r"^[ \t]*\.end[ \t]*\r?$", text, re.IGNORECASE | re.MULTILINE))
    line = f".save v({node})\n"
    if not ends:
        return (text.rstrip("\n") + "\n" + line).encode("latin-1")
    at = ends[-1].start()
    return (text[:at] + line + text[at:]).encode("latin-1")


def augmented_point(netlist: Any, aug_bytes: bytes, node: str,
                     terminal: tuple[str, str] | None, base_dir: Path) -> tuple[str, str]:
    """The augmented netlist's node for the point read, and a sentence that
    says which point of the copper it is."""
    from parasite.netlist import parse_netlist

    aug = parse_netlist(aug_bytes, "<augmented>", base_dir)
    if terminal is not None:
        aug_node = aug.terminal_node(terminal[0], terminal[1])
        return aug_node, (f"terminal {terminal[1]} of {terminal[0]} (node {node} as written; "
                          f"node {aug_node} at the end of the copper in the augmented netlist)")
    original = {e.key for e in netlist.elements}
    pins = []
    for e in aug.elements:
        if e.key not in original:
            continue
        pins += [f"{e.name}:{tn}" for tn, n in zip(e.terminal_names, e.nodes, strict=False)
                 if n == node]
    if not pins:
        return node, f"node {node}"
    return node, (f"node {node}: with the copper, the point at pin {', '.join(pins)}; name a "
                  "terminal (--node ELEMENT:TERMINAL) to read another pin of the net")
