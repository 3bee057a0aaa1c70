"""A small reader of KiCad's S-expression files, with line numbers.

KiCad's board file is a tree of lists ``(token value ...)``; atoms are bare
words, numbers or double-quoted strings with backslash escapes (KiCad's
developer documentation, "S-Expression Format", sexpr-intro). The reader is
our own (about a hundred lines, no dependency): it keeps the 1-based line of
every list, which the importer needs to name the place of a bad value, and it
reads a 10,000-segment board in a fraction of a second (benchmarks/bench_import.py).

A list is an :class:`Expr`: ``head`` (its first atom), ``items`` (the rest:
atoms as ``str`` for bare words and :class:`Quoted` for strings, or nested
:class:`Expr`), ``line``. Numbers stay text until the board reader converts
them, so a bad number is reported where it is used.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from dataclasses import dataclass, field

from geometry.kicad.errors import BoardError

# one alternative per kind of token; group 5 counts lines, group 6 is a stray '"'
_TOKEN = re.compile(r'(\()|(\))|"((?:[^"\\]|\\.)*)"|([^\s()"]+)|(\n)|(")', re.S)
_ESCAPE = re.compile(r"\\(.)", re.S)
_ESCAPES = {"n": "\n", "t": "\t", "r": "\r", '"': '"', "\\": "\\"}


class Quoted(str):
    """A double-quoted string atom (so ``"1"`` and ``1`` stay distinguishable)."""


@dataclass
class Expr:
    head: str
    line: int
    items: list[str | Expr] = field(default_factory=list)

    def lists(self, head: str) -> Iterator[Expr]:
        """The child lists whose head is ``head``, in order."""
        for it in self.items:
            if isinstance(it, Expr) and it.head == head:
                yield it

    def first(self, head: str) -> Expr | None:
        """The first child list with this head, or None."""
        for it in self.items:
            if type(it) is Expr and it.head == head:
                return it
        return None

    def atoms(self) -> list[str]:
        """The atoms among the items (strings and bare words), in order."""
        return [it for it in self.items if not isinstance(it, Expr)]


def parse_sexpr(text: str, file: str) -> Expr:
    """Parse one top-level list from ``text``; raises :class:`BoardError`
    naming ``file`` and the line for unbalanced parentheses, a truncated file,
    an unterminated string or text after the top-level list."""
    stack: list[Expr] = []
    root: Expr | None = None
    closed_at = 0
    line = 1
    want_head = False
    for m in _TOKEN.finditer(text):
        kind = m.lastindex
        if kind == 5:
            line += 1
            continue
        if want_head:
            if kind != 4:
                raise BoardError("a list must start with a bare token after '('", file=file, line=line)
            expr = Expr(m.group(4), line)
            if stack:
                stack[-1].items.append(expr)
            elif root is not None:
                raise BoardError(
                    f"unbalanced parentheses: a ')' on this line closes the top-level list "
                    f"'({root.head}' and more lists follow (on line {line})", file=file,
                    line=closed_at)
            stack.append(expr)
            want_head = False
        elif kind == 1:
            want_head = True
        elif kind == 2:
            if not stack:
                raise BoardError("unbalanced parentheses: ')' closes no list", file=file, line=line)
            done = stack.pop()
            if not stack:
                root = done
                closed_at = line
        elif kind == 3:
            quoted = m.group(3)
            if not stack:
                raise BoardError("text outside the board's top-level list", file=file, line=line)
            if "\\" in quoted:
                quoted = _ESCAPE.sub(lambda e: _ESCAPES.get(e.group(1), e.group(1)), quoted)
            stack[-1].items.append(Quoted(quoted))
            line += quoted.count("\n")
        elif kind == 4:
            if not stack:
                raise BoardError(f"text outside the board's top-level list: {m.group(4)[:20]!r}",
                                 file=file, line=line)
            stack[-1].items.append(m.group(4))
        else:
            raise BoardError("unterminated string (a '\"' without its closing '\"')", file=file,
                             line=line)
    line = text.count("\n", 0, len(text.rstrip())) + 1  # the last line with text
    if want_head:
        raise BoardError("the file ends after '('", file=file, line=line)
    if stack:
        raise BoardError(
            f"the file ends inside the list '({stack[-1].head}' opened on line {stack[-1].line} "
            f"(truncated file, or unbalanced parentheses)", file=file, line=line)
    if root is None:
        raise BoardError("the file holds no S-expression (empty file?)", file=file, line=line)
    return root
