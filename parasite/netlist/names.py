"""Node and element names as ngspice compares them."""

from __future__ import annotations

import re

from parasite.netlist.lines import ascii_lower

GROUND_ALIASES = frozenset({"0", "gnd"})

# A node name that can be written into a card without changing how the card
# reads: no blanks, none of ngspice's field separators , ( ) =, no comment
# characters (; $ * //), no braces or quotes, and not starting with + or a
# character ngspice treats as a comment lead.
_NODE_NAME = re.compile(r"[A-Za-z0-9_][A-Za-z0-9_.:#\-+\[\]<>!@%^&|~]*\Z")


def canonical_node(name: str) -> str:
    """The name ngspice uses for node ``name``: ASCII lower-case, and ``gnd`` is
    ground ``0`` (ngspice 39 treats both as the reference node)."""
    low = ascii_lower(name)
    return "0" if low in GROUND_ALIASES else low


def is_writable_node_name(name: str) -> bool:
    """True when ``name`` can replace a node token as it is (see ``_NODE_NAME``)."""
    return bool(_NODE_NAME.match(name)) and "//" not in name


NODE_NAME_RULE = (
    "a letter, digit or '_', then letters, digits or any of _ . : # - + [ ] < > ! @ % ^ & | ~"
)
