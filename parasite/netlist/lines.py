"""Physical lines and logical cards of SPICE text, without losing a byte.

A file is split into physical lines that keep their exact bytes and their line
end (``\\n``, ``\\r\\n`` or none on a last line). The text of a line is decoded
as UTF-8 with ``surrogateescape``, so that any byte sequence (Latin-1 comments,
stray bytes) survives and ASCII offsets are character offsets.

Physical lines are then grouped into logical cards the way ngspice 39 groups
them (each rule checked with ``ngspice -b`` and its ``listing e`` command, see
``shared/notes/ngspice-facts.md``):

* leading blanks (space, tab, CR, FF, VT) are skipped before a line is classified;
* ``*`` first makes a comment, and so does any of ``= [ ] ? ( ) & % $ " ! : , ;``
  (ngspice warns "unusual leading characters" and replaces it with ``*``);
* ``+`` first continues the previous card; comment and blank lines may sit in
  between. A line whose content ends in ``\\\\`` (two backslashes, trailing blanks
  allowed) is continued by the whole next line that is not blank (a comment
  line there is glued on as text, as ngspice does);
* inline comments: ``;`` anywhere, ``//`` anywhere, ``$`` when it follows a
  space, tab or comma;
* ``.control`` ... ``.endc`` is one block of commands, kept as it is.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

BLANKS = " \t\r\f\v"
# Leading characters that ngspice 39 turns into a comment (its warning lists them).
COMMENT_LEADS = frozenset("*=[]?()&%$\"!:,;\f")

CardKind = Literal["title", "element", "dot", "control", "other"]


@dataclass
class PhysicalLine:
    """One physical line: its original bytes, its text (no line end) and its line end."""

    raw: bytes
    text: str
    eol: str
    modified: bool = False

    def to_bytes(self) -> bytes:
        if not self.modified:
            return self.raw
        return (self.text + self.eol).encode("utf-8", "surrogateescape")

    @classmethod
    def new(cls, text: str, eol: str) -> PhysicalLine:
        return cls(raw=(text + eol).encode("utf-8", "surrogateescape"), text=text, eol=eol)


def split_lines(data: bytes) -> list[PhysicalLine]:
    """Split bytes at ``\\n``; ``b"".join(l.raw for l in result) == data`` always."""
    lines: list[PhysicalLine] = []
    for raw in _split_lf(data):
        if raw.endswith(b"\r\n"):
            body, eol = raw[:-2], "\r\n"
        elif raw.endswith(b"\n"):
            body, eol = raw[:-1], "\n"
        else:
            body, eol = raw, ""
        lines.append(PhysicalLine(raw=raw, text=body.decode("utf-8", "surrogateescape"), eol=eol))
    return lines


def _split_lf(data: bytes) -> list[bytes]:
    parts = data.split(b"\n")
    out = [p + b"\n" for p in parts[:-1]]
    if parts[-1]:
        out.append(parts[-1])
    return out


def content_end(text: str, start: int = 0, *, dollar: bool = True) -> int:
    """Index where the card content of ``text`` ends: at the first inline comment
    (``;`` anywhere, ``//`` anywhere, ``$`` after a space, tab or comma), else the end.
    With ``dollar`` False ``$`` starts no comment (ngspice's PSpice compatibility mode)."""
    n = len(text)
    i = start
    while i < n:
        c = text[i]
        if c == ";":
            return i
        if c == "/" and i + 1 < n and text[i + 1] == "/":
            return i
        if dollar and c == "$" and i > start and text[i - 1] in " \t,":
            return i
        i += 1
    return n


def first_word(text: str) -> str:
    """The first blank-separated word of ``text`` (after leading blanks), lower-case ASCII."""
    s = text.lstrip(BLANKS)
    end = 0
    while end < len(s) and s[end] not in BLANKS:
        end += 1
    return ascii_lower(s[:end])


_LOWER = {c: c + 32 for c in range(ord("A"), ord("Z") + 1)}


def ascii_lower(s: str) -> str:
    """Lower-case only ASCII letters, as ngspice does (C ``tolower``)."""
    return s.translate(_LOWER)


@dataclass
class Segment:
    """The content of one physical line that belongs to a card: ``text[start:end]``."""

    line: int  # 0-based index into the file's lines
    start: int
    end: int


@dataclass
class Card:
    """A logical card: its kind, its first and last physical line, and the content
    segments (first line after leading blanks, continuation lines after ``+``)."""

    kind: CardKind
    first: int
    segments: list[Segment] = field(default_factory=list)
    last: int = -1
    keyword: str = ""  # for dot cards: ".subckt", ".model", ... (lower-case)
    closed: bool = True  # for a control block: ended by .endc


class OrphanContinuation(Exception):
    """A ``+`` line with no card before it in the same file (line index in ``args[0]``)."""


def _strip_backslashes(text: str, start: int, end: int) -> tuple[int, bool]:
    """If text[start:end] ends with ``\\\\`` (trailing blanks allowed), return the end
    before the backslashes and True."""
    j = end
    while j > start and text[j - 1] in BLANKS:
        j -= 1
    if j - start >= 2 and text[j - 2 : j] == "\\\\":
        return j - 2, True
    return end, False


def group_cards(
    lines: list[PhysicalLine], *, title: bool, dollar: bool = True
) -> tuple[list[Card], list[int]]:
    """Group physical lines into logical cards.

    With ``title`` the first line is the title card whatever it holds (ngspice
    drops it from the circuit; ``+`` lines right after it continue it and are
    dropped too). Comment and blank lines belong to no card. Returns the cards and
    the indices of ``+`` lines that continued the title; ``dollar`` as in
    :func:`content_end`. Raises
    :class:`OrphanContinuation` for a ``+`` line with no card before it.
    """
    cards: list[Card] = []
    title_continuations: list[int] = []
    current: Card | None = None
    control: Card | None = None
    glue_next = False
    start_index = 0
    if title and lines:
        current = Card("title", 0, [Segment(0, 0, len(lines[0].text))], last=0)
        cards.append(current)
        start_index = 1
    for idx in range(start_index, len(lines)):
        text = lines[idx].text
        if control is not None:
            control.last = idx
            if first_word(text) == ".endc":
                control.closed = True
                control = None
            continue
        if glue_next and current is not None:
            if not text.strip(BLANKS):
                continue  # ngspice -b: blank lines between are skipped
            end, glue_next = _strip_backslashes(text, 0, content_end(text, dollar=dollar))
            current.segments.append(Segment(idx, 0, end))
            current.last = idx
            continue
        col = 0
        while col < len(text) and text[col] in BLANKS:
            col += 1
        if col == len(text):
            continue  # blank line
        lead = text[col]
        if lead in COMMENT_LEADS:
            continue
        if lead == "+":
            if current is None:
                raise OrphanContinuation(idx)
            end, glue_next = _strip_backslashes(text, col + 1, content_end(text, col + 1, dollar=dollar))
            current.segments.append(Segment(idx, col + 1, end))
            current.last = idx
            if current.kind == "title":
                title_continuations.append(idx)
            continue
        end, glue_next = _strip_backslashes(text, col, content_end(text, col, dollar=dollar))
        if lead == ".":
            keyword = first_word(text[col:end])
            kind: CardKind = "control" if keyword == ".control" else "dot"
        elif lead.isascii() and lead.isalpha():
            kind, keyword = "element", ""
        else:
            kind, keyword = "other", ""
        current = Card(kind, idx, [Segment(idx, col, end)], last=idx, keyword=keyword)
        cards.append(current)
        if kind == "control":
            control = current
            current.closed = False
            glue_next = False
    return cards, title_continuations


def open_control(cards: list[Card]) -> Card | None:
    """The ``.control`` card left open at the end of the file (no ``.endc``), if any."""
    for card in reversed(cards):
        if card.kind == "control":
            return None if card.closed else card
    return None
