"""Where appended cards (the copper block) go in the main file.

A SPICE-family simulator either reads the whole deck before it runs anything
(ngspice) or runs each dot command as it reads it (gnucap 0.36 in batch mode:
an ``.ac`` card runs an AC analysis of the elements read so far, and ``.end``
stops reading; see ``docs/simulators.md``). Cards that add elements must
therefore sit after the last top-level element and before the first card that
uses the circuit. The position chosen here, in the main file's lines:

1. right after the last top-level element: an element card outside every
   ``.subckt`` body, or an ``.include``/``.lib`` card of the main file that
   brings top-level elements in. An element inside an ``.if`` block counts up
   to the block's ``.endif``, so the block is never split;
2. with no such element, right after the card that precedes the first
   top-level action card (:data:`ACTION_KEYWORDS`, any ``.control`` block);
3. with neither, right after the last card of the file.

Comments, blank lines, ``.model``, ``.param``, ``.options``, ``.subckt``
definitions, ``.ic`` and ``.nodeset`` cards are never moved: the new cards go
between whole cards (after the last continuation line), so every original
byte stays where it was. ``.ic``/``.nodeset`` cards name nodes of the
original netlist (each net's anchor keeps its name), so the block before or
after them reads the same in ngspice; gnucap 0.36 ignores both cards with a
warning ("ic: no match").

When an element follows the first action card (ngspice reads it, gnucap
does not include it in that analysis), rule 1 still wins: the copper is
wired to the elements' terminals, so it must come with them.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from parasite.netlist.lines import Card, PhysicalLine
from parasite.netlist.reader import Reader, SourceFile
from parasite.netlist.tokens import CardText

#: Top-level dot cards that use the circuit (analyses, outputs, measurements,
#: the end of the deck); ``.control`` blocks count too. ``.options``, ``.temp``,
#: ``.param``, ``.model``, ``.ic`` and ``.nodeset`` are settings, not actions.
ACTION_KEYWORDS = frozenset({
    ".tran", ".ac", ".dc", ".op", ".noise", ".tf", ".sens", ".disto", ".pz", ".sp", ".pss",
    ".four", ".fourier", ".print", ".plot", ".probe", ".meas", ".measure", ".save", ".width",
    ".alter", ".end",
})


class PlacingReader(Reader):
    """A :class:`Reader` that also notes which ``.include``/``.lib`` cards of the
    main file bring top-level elements in (``element_includes``: 0-based line
    indices of those cards)."""

    def __init__(self, load: Callable[[Path], list[PhysicalLine]]) -> None:
        super().__init__(load)
        self.element_includes: set[int] = set()

    def _include(self, src: SourceFile, card: Card, text: CardText, *, library: bool) -> None:
        before = len(self.elements)
        super()._include(src, card, text, library=library)
        if src.main and any(c.scope is None for c in self.elements[before:]):
            self.element_includes.add(card.first)


def is_action(card: Card) -> bool:
    """Whether ``card`` uses the circuit: an analysis, output or measurement card,
    ``.end``, or a ``.control`` block."""
    return card.kind == "control" or (card.kind == "dot" and card.keyword in ACTION_KEYWORDS)


def insertion_line(cards: list[Card], n_lines: int, element_includes: set[int]) -> int:
    """The 0-based index of the main-file line before which new cards go (``n_lines``:
    at the end). ``cards`` are the main file's logical cards in order, the title
    first; ``element_includes`` the include cards that bring top-level elements."""
    depth = 0  # open .subckt bodies
    cond: list[int] = []  # indices (into cards) of the open .if cards
    last_element: int | None = None  # line after which the block goes (rule 1)
    pending = False  # a top-level element inside the open .if blocks
    first_action: int | None = None  # index into cards (rule 2)
    for index, card in enumerate(cards):
        if card.kind == "title":
            continue
        keyword = card.keyword if card.kind == "dot" else ""
        if keyword == ".subckt":
            depth += 1
            continue
        if keyword == ".ends":
            depth = max(depth - 1, 0)
            continue
        if depth:
            continue
        if keyword == ".if":
            cond.append(index)
        elif keyword == ".endif" and cond:
            cond.pop()
            if not cond and pending:
                last_element, pending = card.last, False
        if card.kind == "element" or (card.kind == "dot" and card.first in element_includes):
            if cond:
                pending = True
            else:
                last_element = card.last
        if first_action is None and is_action(card):
            first_action = cond[0] if cond else index
    if pending:  # an .if block left open: the end of the file is the only safe place
        return n_lines
    if last_element is not None:
        return last_element + 1
    if first_action is not None:
        return cards[first_action - 1].last + 1 if first_action > 0 else 0
    return cards[-1].last + 1 if cards else n_lines
