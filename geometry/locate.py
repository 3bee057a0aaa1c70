"""Where a key path sits in the text of a routes file (line numbers for messages).

``tomllib`` and ``json`` return values without positions, so the text is
scanned a second time by a small structural scanner that records the line of
every key and of every array element. The scan runs only on text that the real
parser has already accepted; it is best effort (a line that cannot be found is
``None``) and never raises. Key paths are tuples of keys (``str``) and 0-based
array indices (``int``): ``("trace", 3, "width")`` is written ``trace[3].width``.
"""

from __future__ import annotations

import bisect
import json
import json.decoder
import re
from collections.abc import Sequence

PathPart = str | int
KeyPath = tuple[PathPart, ...]

_BARE = re.compile(r"[A-Za-z0-9_-]+\Z")


def format_path(path: Sequence[PathPart]) -> str:
    """``("trace", 3, "width")`` -> ``trace[3].width``; keys that are not bare
    TOML keys are quoted (``layers."in 1".z``)."""
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            key = part if _BARE.match(part) else json.dumps(part)
            out += ("." if out else "") + key
    return out


class LineMap:
    """Key path -> 1-based line number, with lookup of the longest known prefix."""

    def __init__(self, lines: dict[KeyPath, int] | None = None,
                 duplicates: list[tuple[KeyPath, int]] | None = None) -> None:
        self.lines: dict[KeyPath, int] = lines or {}
        self.duplicates: list[tuple[KeyPath, int]] = duplicates or []

    def line_of(self, path: Sequence[PathPart]) -> int | None:
        p = tuple(path)
        while p:
            if p in self.lines:
                return self.lines[p]
            p = p[:-1]
        return None


class _Scanner:
    def __init__(self, text: str) -> None:
        self.s = text
        self.i = 0
        self.n = len(text)
        self.starts = [0] + [m.end() for m in re.finditer(r"\n", text)]
        self.lines: dict[KeyPath, int] = {}
        self.duplicates: list[tuple[KeyPath, int]] = []

    def line(self, pos: int | None = None) -> int:
        return bisect.bisect_right(self.starts, self.i if pos is None else pos)

    def record(self, path: KeyPath) -> None:
        self.lines.setdefault(path, self.line())

    def peek(self, k: int = 1) -> str:
        return self.s[self.i:self.i + k]


class _TomlScanner(_Scanner):
    def skip_ws(self, newlines: bool) -> None:
        while self.i < self.n:
            c = self.s[self.i]
            if c in " \t\r" or (newlines and c == "\n"):
                self.i += 1
            elif c == "#":
                while self.i < self.n and self.s[self.i] != "\n":
                    self.i += 1
            else:
                return

    def skip_string(self) -> str:
        s = self.s
        for q in ('"""', "'''"):
            if s.startswith(q, self.i):
                end = s.find(q, self.i + 3)
                end = self.n if end < 0 else end + 3
                while end < self.n and s[end] == q[0]:  # up to two quotes may close it
                    end += 1
                text = s[self.i + 3:end - 3]
                self.i = end
                return text
        q = s[self.i]
        j = self.i + 1
        while j < self.n and s[j] != q and s[j] != "\n":
            j += 2 if (q == '"' and s[j] == "\\") else 1
        raw = s[self.i:j + 1]
        self.i = j + 1
        if q == "'":
            return raw[1:-1]
        try:
            return str(json.loads(raw))
        except ValueError:
            return raw[1:-1]

    def key(self) -> list[str]:
        parts: list[str] = []
        while True:
            self.skip_ws(False)
            if self.peek() in ('"', "'"):
                parts.append(self.skip_string())
            else:
                m = re.compile(r"[A-Za-z0-9_-]+").match(self.s, self.i)
                if not m:
                    raise ValueError("key expected")
                parts.append(m.group())
                self.i = m.end()
            self.skip_ws(False)
            if self.peek() == ".":
                self.i += 1
                continue
            return parts

    def value(self, path: KeyPath) -> None:
        self.skip_ws(False)
        c = self.peek()
        if c == "[":
            self.i += 1
            idx = 0
            while True:
                self.skip_ws(True)
                if self.peek() == "]":
                    self.i += 1
                    return
                self.record(path + (idx,))
                self.value(path + (idx,))
                self.skip_ws(True)
                if self.peek() == ",":
                    self.i += 1
                    idx += 1
                elif self.peek() == "]":
                    self.i += 1
                    return
                else:
                    raise ValueError("array")
        elif c == "{":
            self.i += 1
            while True:
                self.skip_ws(False)
                if self.peek() == "}":
                    self.i += 1
                    return
                sub = path + tuple(self.key())
                self.record(sub)
                self.i += 1  # '='
                self.value(sub)
                self.skip_ws(False)
                if self.peek() == ",":
                    self.i += 1
                elif self.peek() == "}":
                    self.i += 1
                    return
                else:
                    raise ValueError("inline table")
        elif c in ('"', "'"):
            self.skip_string()
        else:
            m = re.compile(r"[^,\]\}\s#]+").match(self.s, self.i)
            if not m:
                raise ValueError("value")
            self.i = m.end()

    def scan(self) -> None:
        table: KeyPath = ()
        arrays: dict[KeyPath, int] = {}  # array-of-tables path -> current index

        def resolve(keys: list[str]) -> KeyPath:
            out: KeyPath = ()
            for k in keys:
                out = out + (k,)
                if out in arrays:
                    out = out + (arrays[out],)
            return out

        while True:
            self.skip_ws(True)
            if self.i >= self.n:
                return
            if self.s.startswith("[[", self.i):
                self.i += 2
                keys = self.key()
                self.i += 2
                base = resolve(keys[:-1]) + (keys[-1],)
                arrays[base] = arrays.get(base, -1) + 1
                table = base + (arrays[base],)
                self.lines[table] = self.line()
            elif self.peek() == "[":
                self.i += 1
                keys = self.key()
                self.i += 1
                table = resolve(keys)
                self.lines.setdefault(table, self.line())
            else:
                path = table + tuple(self.key())
                self.record(path)
                self.i += 1  # '='
                self.value(path)


class _JsonScanner(_Scanner):
    def skip_ws(self) -> None:
        while self.i < self.n and self.s[self.i] in " \t\r\n":
            self.i += 1

    def string(self) -> str:
        text, end = json.decoder.scanstring(self.s, self.i + 1)  # type: ignore[attr-defined]
        self.i = end
        return text

    def value(self, path: KeyPath) -> None:
        self.skip_ws()
        c = self.peek()
        if c == "{":
            self.i += 1
            seen: set[str] = set()
            while True:
                self.skip_ws()
                if self.peek() == "}":
                    self.i += 1
                    return
                line = self.line()
                key = self.string()
                if key in seen:
                    self.duplicates.append((path + (key,), line))
                seen.add(key)
                self.lines.setdefault(path + (key,), line)
                self.skip_ws()
                self.i += 1  # ':'
                self.value(path + (key,))
                self.skip_ws()
                if self.peek() == ",":
                    self.i += 1
                elif self.peek() != "}":
                    raise ValueError("object")
        elif c == "[":
            self.i += 1
            idx = 0
            while True:
                self.skip_ws()
                if self.peek() == "]":
                    self.i += 1
                    return
                self.record(path + (idx,))
                self.value(path + (idx,))
                self.skip_ws()
                if self.peek() == ",":
                    self.i += 1
                    idx += 1
                elif self.peek() != "]":
                    raise ValueError("array")
        elif c == '"':
            self.string()
        else:
            m = re.compile(r"[^,\]\}\s]+").match(self.s, self.i)
            if not m:
                raise ValueError("value")
            self.i = m.end()


def toml_lines(text: str) -> LineMap:
    """Line map of TOML text (already accepted by ``tomllib``); best effort."""
    sc = _TomlScanner(text)
    try:
        sc.scan()
    except (ValueError, IndexError):
        pass
    return LineMap(sc.lines)


def json_lines(text: str) -> LineMap:
    """Line map of JSON text (already accepted by ``json``), with the keys
    that an object repeats (``json`` silently keeps the last one)."""
    sc = _JsonScanner(text)
    try:
        sc.value(())
    except (ValueError, IndexError):
        pass
    return LineMap(sc.lines, sc.duplicates)
