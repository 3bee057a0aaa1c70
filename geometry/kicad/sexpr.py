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

_TOKEN = re.compile(r'\s*(?:(\()|(\))|"((?:[^"\\]|\\.)*)"|([^\s()"]+))', re.S)
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
        return next(self.lists(head), None)

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
    pos = 0
    line = 1
    n = len(text)
    match = _TOKEN.match
    while pos < n:
        m = match(text, pos)
        if m is None:
            rest = text[pos:].lstrip()
            if not rest:
                break
            line += text.count("\n", pos, n - len(rest))
            raise BoardError("unterminated string (a '\"' without its closing '\"')", file=file,
                             line=line)
        start = m.start(0)
        line += text.count("\n", pos, start)
        open_, close, quoted, bare = m.groups()
        tok_start = m.start(m.lastindex or 0)
        line += text.count("\n", start, tok_start)
        if open_:
            if root is not None and not stack:
                raise BoardError(
                    f"unbalanced parentheses: a ')' on this line closes the top-level list "
                    f"'({root.head}' and more lists follow (on line {line})", file=file,
                    line=closed_at)
            head_m = match(text, m.end())
            if head_m is None or head_m.group(4) is None:
                raise BoardError("a list must start with a bare token after '('", file=file,
                                 line=line)
            line += text.count("\n", m.end(), head_m.end())
            expr = Expr(head_m.group(4), line)
            if stack:
                stack[-1].items.append(expr)
            stack.append(expr)
            pos = head_m.end()
            continue
        if close:
            if not stack:
                raise BoardError("unbalanced parentheses: ')' closes no list", file=file, line=line)
            done = stack.pop()
            if not stack:
                root = done
                closed_at = line
        elif quoted is not None:
            if not stack:
                raise BoardError("text outside the board's top-level list", file=file, line=line)
            value = _ESCAPE.sub(lambda e: _ESCAPES.get(e.group(1), e.group(1)), quoted)
            stack[-1].items.append(Quoted(value))
            line += quoted.count("\n")
        else:
            if not stack:
                raise BoardError(f"text outside the board's top-level list: {bare[:20]!r}",
                                 file=file, line=line)
            stack[-1].items.append(bare)
        pos = m.end()
    if stack:
        raise BoardError(
            f"the file ends inside the list '({stack[-1].head}' opened on line {stack[-1].line} "
            f"(truncated file, or unbalanced parentheses)", file=file, line=line)
    if root is None:
        raise BoardError("the file holds no S-expression (empty file?)", file=file, line=line)
    return root
