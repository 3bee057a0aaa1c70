"""Fields of a card, with their place in the physical lines.

The content segments of a card (its first line and its continuation lines,
inline comments cut off) are joined with one space, as ngspice joins them, and
split into fields. ngspice 39 splits fields at blanks and at ``,``, ``(``,
``)`` and ``=`` (checked with ``ngspice -b``: ``R1 a,0 1k`` and ``R2 (a b) 1k``
both read two nodes). Here ``=`` is kept as a field of its own, so that
``key=value`` pairs can be told from nodes. A brace expression ``{...}`` (nested)
and a quoted string ``'...'`` or ``"..."`` are one field whatever they hold;
they are never evaluated. For XSPICE ``A`` cards, ``[`` and ``]`` are fields of
their own too.
"""

from __future__ import annotations

from bisect import bisect_right
from dataclasses import dataclass

from parasite.netlist.lines import BLANKS, PhysicalLine, Segment

SEPARATORS = BLANKS + ",()"


@dataclass(frozen=True)
class Token:
    """A field: its text and its span ``[start, end)`` in the card's joined text."""

    text: str
    start: int
    end: int
    depth: int = 0  # parentheses open around the field (``AND(2)``: ``2`` has depth 1)


@dataclass
class CardText:
    """The joined content of a card and the map back to physical lines."""

    text: str
    offsets: list[int]  # joined offset where each segment starts
    segments: list[Segment]

    @classmethod
    def build(cls, segments: list[Segment], lines: list[PhysicalLine]) -> CardText:
        parts: list[str] = []
        offsets: list[int] = []
        pos = 0
        for seg in segments:
            offsets.append(pos)
            piece = lines[seg.line].text[seg.start : seg.end]
            parts.append(piece)
            pos += len(piece) + 1
        return cls(" ".join(parts), offsets, list(segments))

    def locate(self, start: int, end: int) -> tuple[int, int, int] | None:
        """Physical (line index, column start, column end) of the joined span, or
        None when the span crosses from one physical line to the next."""
        k = bisect_right(self.offsets, start) - 1
        if k < 0:
            return None
        seg = self.segments[k]
        col = seg.start + (start - self.offsets[k])
        col_end = col + (end - start)
        if col_end > seg.end:
            return None
        return seg.line, col, col_end


def tokenize(text: str, *, brackets: bool = False) -> list[Token]:
    """Split joined card text into fields (see the module docstring)."""
    tokens: list[Token] = []
    n = len(text)
    i = 0
    parens = 0
    while i < n:
        c = text[i]
        if c in SEPARATORS:
            if c == "(":
                parens += 1
            elif c == ")" and parens:
                parens -= 1
            i += 1
            continue
        if c == "=" or (brackets and c in "[]"):
            tokens.append(Token(c, i, i + 1, parens))
            i += 1
            continue
        j = i
        depth = 0
        while j < n:
            c = text[j]
            if c == "{":
                depth += 1
            elif c == "}":
                if depth:
                    depth -= 1
            elif c in "'\"" and depth == 0 and j == i:
                close = text.find(c, j + 1)
                j = n if close < 0 else close + 1
                break
            elif depth == 0 and (c in SEPARATORS or c == "=" or (brackets and c in "[]")):
                break
            j += 1
        tokens.append(Token(text[i:j], i, j, parens))
        i = j
    return tokens
