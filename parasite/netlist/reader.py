"""Reading the cards of a netlist and of the files it includes.

The reader walks the logical cards of the main file in order and reads an
included file where its ``.include`` or ``.lib`` card stands, as ngspice does
(textual inclusion: a ``.subckt`` may even be closed in another file). It
records element cards with their scope, ``.model`` and ``.subckt``
definitions, ``.global`` nodes, and in the main file where the top-level
``.end`` is. It does not evaluate parameters or expressions.

ngspice 39 behaviour followed here (each checked with ``ngspice -b``):

* cards after ``.end`` are still read (also in included files);
* ``.inc`` followed by anything (``.include``, ``.incl``, ...) includes a file;
  the name may be quoted; a relative name is taken relative to the including
  file's folder;
* ``.lib FILE SECTION`` reads the cards between ``.lib SECTION`` and ``.endl``
  of FILE; other cards of FILE are not read;
* ``.ends`` closes the innermost open ``.subckt`` whatever name it gives;
  ``.ends`` with none open is an error ("Mismatch of .subckt ... .ends");
* element names are unique per subcircuit body and at top level
  (case-insensitive; ngspice: "device already exists"). Cards in different
  branches of one ``.if``/``.else`` may share a name;
* with the PSpice compatibility mode (``set ngbehavior=ps`` or ``psa`` in
  ``.spiceinit``) ``$`` never starts an inline comment (``R1 a 0 1k $x`` is an
  error there, a comment otherwise), so ``U1 BUF $G_DPWR $G_DGND a y tm io``
  keeps its nodes. ngspice cannot run such a digital primitive without that
  mode (read without it the card is ``U1 BUF``), so a netlist with a ``U``
  card that names a PSpice digital primitive and is cut short by a ``$`` is
  read again with ``$`` as an ordinary character.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from geometry.limits import MAX_INCLUDE_DEPTH, MAX_SUBCKT_DEPTH
from parasite.errors import NetlistError
from parasite.netlist.digital import primitive
from parasite.netlist.kinds import LayoutError, layout
from parasite.netlist.lines import (
    BLANKS,
    Card,
    OrphanContinuation,
    PhysicalLine,
    ascii_lower,
    group_cards,
    open_control,
)
from parasite.netlist.names import canonical_node
from parasite.netlist.records import Model
from parasite.netlist.tokens import CardText, Token, tokenize

MAX_SHOWN = 100  # characters of a card shown in an error message


@dataclass
class SourceFile:
    """A file of the netlist: the name used in messages, its folder (where its
    relative includes are looked for) and its physical lines."""

    name: str
    directory: Path
    lines: list[PhysicalLine]
    main: bool = False
    path: Path | None = None  # resolved path, where the file is one


@dataclass(eq=False)
class Scope:
    """A ``.subckt`` body."""

    name: str
    ports: tuple[str, ...]
    line: int
    file: str
    parent: Scope | None
    models: dict[str, Model] = field(default_factory=dict)
    subckts: dict[str, Scope] = field(default_factory=dict)


@dataclass(eq=False)
class ElementCard:
    """An element card as read: where it is, its fields, and its scope."""

    name: str
    key: str
    letter: str
    source: SourceFile
    card: Card
    text: CardText
    tokens: list[Token]
    scope: Scope | None

    @property
    def line(self) -> int:
        return self.card.first + 1

    def retokenize(self) -> None:
        self.text = CardText.build(self.card.segments, self.source.lines)
        self.tokens = tokenize(self.text.text, brackets=self.letter == "A")


@dataclass
class ReadResult:
    title: str
    elements: list[ElementCard]
    models: dict[str, Model]
    subckts: dict[str, Scope]
    scopes: list[Scope]
    global_nodes: set[str]
    warnings: list[str]
    main_cards: list[Card]
    main_end: int | None  # line index of the main file's top-level .end
    main_open_control: int | None  # line index of a .control left open at the end
    files: list[Path] = field(default_factory=list)  # the included files, resolved


def shown(text: str) -> str:
    """A card's text, shortened for a message."""
    text = " ".join(text.split())
    return text if len(text) <= MAX_SHOWN else text[: MAX_SHOWN - 3] + "..."


def include_args(rest: str) -> tuple[str, str]:
    """Split the argument text of an include card into the file name (quotes
    removed) and what follows it."""
    rest = rest.strip(BLANKS)
    if rest[:1] in ("'", '"'):
        close = rest.find(rest[0], 1)
        if close < 0:
            return rest[1:], ""
        return rest[1:close], rest[close + 1 :]
    end = 0
    while end < len(rest) and rest[end] not in BLANKS:
        end += 1
    return rest[:end], rest[end:]


class Reader:
    """Reads a main file and its includes once; ``load`` returns a file's lines
    (raising OSError when it cannot be read)."""

    def __init__(self, load: Callable[[Path], list[PhysicalLine]], *, dollar: bool = True) -> None:
        self._load = load
        self._dollar = dollar  # "$" after a blank starts a comment (not in PSpice mode)
        self._pspice_card: tuple[str, int, str] | None = None  # file, line, element
        self.elements: list[ElementCard] = []
        self.models: dict[str, Model] = {}
        self.subckts: dict[str, Scope] = {}
        self.scopes: list[Scope] = []
        self.global_nodes: set[str] = set()
        self.warnings: list[str] = []
        self._stack: list[Scope] = []
        self._includes: list[tuple[Path, str | None, str]] = []
        self.files: list[Path] = []  # every file included, resolved
        self._if_stack: list[list[int]] = []
        self._if_count = 0
        # (scope id, element key) -> [(condition path, file, line)]
        self._seen: dict[tuple[int, str], list[tuple[tuple[tuple[int, int], ...], str, int]]] = {}
        self._main_end: int | None = None
        self._main_open_control: int | None = None
        self._main_cards: list[Card] = []

    def read(self, main: SourceFile) -> ReadResult:
        try:
            result: ReadResult | None = self._read(main)
        except NetlistError:
            # a '$' cut may have broken a later card (a "\\" continuation cut off)
            if self._pspice_card is None or not self._dollar:
                raise
            result = None
        if self._pspice_card is None or not self._dollar:
            assert result is not None
            return result
        file, line, name = self._pspice_card
        try:
            again = Reader(self._load, dollar=False)._read(main)
        except NetlistError:
            if result is None:
                raise
            return result  # not a netlist of the PSpice mode after all: as ngspice reads it
        again.warnings.insert(0, (
            f"{file}:{line}: warning: {name} is a PSpice-style digital primitive, which ngspice "
            "runs only in its PSpice compatibility mode ('set ngbehavior=psa' in .spiceinit); "
            "the netlist is read as that mode reads it ('$' starts no comment)"))
        return again

    def _read(self, main: SourceFile) -> ReadResult:
        if main.path is not None:
            self._includes.append((main.path, None, main.name))
        self._read_file(main, section=None)
        if self._stack:
            scope = self._stack[-1]
            raise NetlistError(
                f".subckt {scope.name} has no matching .ends before the end of the netlist",
                file=scope.file,
                line=scope.line,
            )
        title = main.lines[0].text if main.lines else ""
        return ReadResult(
            title=title,
            elements=self.elements,
            models=self.models,
            subckts=self.subckts,
            scopes=self.scopes,
            global_nodes=self.global_nodes,
            warnings=self.warnings,
            main_cards=self._main_cards,
            main_end=self._main_end,
            main_open_control=self._main_open_control,
            files=self.files,
        )

    # -- files ---------------------------------------------------------------------------

    def _read_file(
        self, src: SourceFile, section: str | None, origin: tuple[str, int] | None = None
    ) -> None:
        try:
            cards, title_lines = group_cards(src.lines, title=src.main, dollar=self._dollar)
        except OrphanContinuation as exc:
            index = int(exc.args[0])
            raise NetlistError(
                "continuation line ('+' first) with no card before it in this file: "
                f"{shown(src.lines[index].text)!r}",
                file=src.name,
                line=index + 1,
            ) from None
        for index in title_lines:
            self.warnings.append(
                f"{src.name}:{index + 1}: warning: a '+' line right after the title "
                "continues the title; ngspice ignores it"
            )
        if src.main:
            self._main_cards = cards
            control = open_control(cards)
            if control is not None:
                self._main_open_control = control.first
                self.warnings.append(
                    f"{src.name}:{control.first + 1}: warning: .control has no .endc"
                )
        active = section is None
        found = section is None
        for card in cards:
            if card.kind in ("title", "control", "other"):
                continue
            text = CardText.build(card.segments, src.lines)
            if card.kind == "dot" and card.keyword in (".lib", ".endl"):
                args = tokenize(text.text)[1:]
                if card.keyword == ".endl":
                    if section is not None:
                        active = False
                    continue
                if len(args) == 1:  # ".lib NAME": a section starts
                    if section is None:
                        raise NetlistError(
                            f"'.lib {args[0].text}' starts a library section, which is only "
                            "read through '.lib FILE SECTION' (ngspice 39 refuses it here); "
                            "to read a file use '.include FILE' or '.lib FILE SECTION'",
                            file=src.name,
                            line=card.first + 1,
                        )
                    if not active and ascii_lower(args[0].text) == section:
                        active = found = True
                    continue
                if active and len(args) >= 2:
                    self._include(src, card, text, library=True)
                elif active:
                    raise NetlistError(
                        f".lib needs a file and a section name: {shown(text.text)!r}",
                        file=src.name,
                        line=card.first + 1,
                    )
                continue
            if not active:
                continue
            if card.kind == "dot":
                self._dot(src, card, text)
            else:
                self._element(src, card, text)
        if not found:
            raise NetlistError(
                f"library section {section!r} not found in {src.name!r} (no '.lib {section}' "
                "... '.endl' block there)",
                file=origin[0] if origin else src.name,
                line=origin[1] if origin else None,
            )

    def _include(self, src: SourceFile, card: Card, text: CardText, *, library: bool) -> None:
        word_end = 0
        body = text.text
        while word_end < len(body) and body[word_end] not in BLANKS:
            word_end += 1
        name, after = include_args(body[word_end:])
        section: str | None = None
        if library:
            words = after.split()
            section = ascii_lower(words[0]) if words else None
        line = card.first + 1
        if not name:
            raise NetlistError(f"{card.keyword} names no file: {shown(body)!r}",
                               file=src.name, line=line)
        target = Path(name).expanduser()
        path = target if target.is_absolute() else src.directory / target
        shown_name = str(path)
        try:
            resolved = path.resolve()
            is_file = path.is_file()
            exists = is_file or path.exists()
        except (OSError, RuntimeError, ValueError):
            resolved, is_file, exists = path, False, False
        key = (resolved, section)
        chain = [n for (p, s, n) in self._includes]
        if len(self._includes) >= MAX_INCLUDE_DEPTH:
            raise NetlistError(
                f"{card.keyword} files are nested more than {MAX_INCLUDE_DEPTH} deep (a limit far "
                f"above any real netlist): {' -> '.join(chain[:3])} -> ... -> {shown_name}",
                file=src.name, line=line)
        if any((p, s) == key for (p, s, _) in self._includes):
            raise NetlistError(
                f"include cycle: {' -> '.join([*chain, shown_name])}",
                file=src.name,
                line=line,
            )
        if not is_file:
            what = "is not a regular file" if exists else "not found"
            raise NetlistError(
                f"{card.keyword} file {name!r} {what} (looked for {shown_name!r}, relative "
                f"to the folder of the including file)",
                file=src.name,
                line=line,
            )
        try:
            lines = self._load(resolved)
        except (OSError, ValueError) as exc:
            reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
            raise NetlistError(
                f"cannot read {card.keyword} file {shown_name!r}: {reason}",
                file=src.name,
                line=line,
            ) from None
        self.files.append(resolved)
        child = SourceFile(shown_name, path.parent, lines, path=resolved)
        self._includes.append((resolved, section, shown_name))
        try:
            self._read_file(child, section, (src.name, line))
        finally:
            self._includes.pop()

    # -- dot cards -------------------------------------------------------------------------

    def _dot(self, src: SourceFile, card: Card, text: CardText) -> None:
        kw = card.keyword
        line = card.first + 1
        if kw.startswith(".inc"):
            self._include(src, card, text, library=False)
        elif kw == ".subckt":
            self._subckt(src, card, text)
        elif kw == ".ends":
            if not self._stack:
                raise NetlistError(
                    f".ends without an open .subckt: {shown(text.text)!r}", file=src.name, line=line
                )
            self._stack.pop()
        elif kw == ".model":
            self._model(src, card, text)
        elif kw == ".global":
            for t in tokenize(text.text)[1:]:
                if t.text != "=":
                    self.global_nodes.add(canonical_node(t.text))
        elif kw == ".if":
            self._if_count += 1
            self._if_stack.append([self._if_count, 0])
        elif kw in (".elseif", ".else"):
            if self._if_stack:
                self._if_stack[-1][1] += 1
        elif kw == ".endif":
            if self._if_stack:
                self._if_stack.pop()
        elif kw == ".end":
            if src.main and not self._stack and self._main_end is None:
                self._main_end = card.first

    def _subckt(self, src: SourceFile, card: Card, text: CardText) -> None:
        tokens = tokenize(text.text)
        if len(tokens) < 2 or tokens[1].text == "=":
            raise NetlistError(f".subckt needs a name: {shown(text.text)!r}",
                               file=src.name, line=card.first + 1)
        ports: list[str] = []
        for i in range(2, len(tokens)):
            t = tokens[i].text
            if ascii_lower(t).startswith("params:") or t == "=" or (
                i + 1 < len(tokens) and tokens[i + 1].text == "="
            ):
                break
            ports.append(ascii_lower(t))
        if len(self._stack) >= MAX_SUBCKT_DEPTH:
            raise NetlistError(f".subckt definitions are nested more than {MAX_SUBCKT_DEPTH} deep "
                               f"(a limit far above any real netlist)",
                               file=src.name, line=card.first + 1)
        parent = self._stack[-1] if self._stack else None
        scope = Scope(tokens[1].text, tuple(ports), card.first + 1, src.name, parent)
        table = parent.subckts if parent is not None else self.subckts
        table.setdefault(ascii_lower(scope.name), scope)
        self.scopes.append(scope)
        self._stack.append(scope)

    def _model(self, src: SourceFile, card: Card, text: CardText) -> None:
        tokens = tokenize(text.text)
        if len(tokens) < 3 or "=" in (tokens[1].text, tokens[2].text):
            raise NetlistError(f".model needs a name and a type: {shown(text.text)!r}",
                               file=src.name, line=card.first + 1)
        params: dict[str, str] = {}
        i = 3
        while i < len(tokens):
            key = tokens[i].text
            if key == "=":
                i += 1
                continue
            if i + 1 < len(tokens) and tokens[i + 1].text == "=":
                j = i + 2
                if j < len(tokens) and tokens[j].text.startswith("["):
                    k = j
                    while k < len(tokens) - 1 and not tokens[k].text.endswith("]"):
                        k += 1
                    value = text.text[tokens[j].start : tokens[k].end]
                    i = k + 1
                else:
                    value = tokens[j].text if j < len(tokens) else ""
                    i = j + 1
                params[ascii_lower(key)] = value
            else:
                params.setdefault(ascii_lower(key), "")
                i += 1
        model = Model(tokens[1].text, ascii_lower(tokens[2].text), params, card.first + 1,
                      src.name)
        table = self._stack[-1].models if self._stack else self.models
        table.setdefault(ascii_lower(model.name), model)

    # -- element cards -------------------------------------------------------------------------

    def _element(self, src: SourceFile, card: Card, text: CardText) -> None:
        letter = text.text[0].upper()
        tokens = tokenize(text.text, brackets=letter == "A")
        name = tokens[0].text
        line = card.first + 1
        try:
            layout(tokens, None)
        except LayoutError as exc:
            raise NetlistError(f"{exc}; card: {shown(text.text)!r}", file=src.name,
                               line=line) from None
        if (letter == "U" and self._dollar and self._pspice_card is None
                and primitive(tokens) is not None
                and any(src.lines[g.line].text[g.end : g.end + 1] == "$" for g in card.segments)):
            self._pspice_card = (src.name, line, name)  # a digital primitive cut at a '$'
        key = ascii_lower(name)
        scope = self._stack[-1] if self._stack else None
        cond = tuple((a, b) for a, b in self._if_stack)
        seen = self._seen.setdefault((id(scope), key), [])
        for other_cond, other_file, other_line in seen:
            if _may_coexist(cond, other_cond):
                where = "at top level" if scope is None else f"in .subckt {scope.name}"
                raise NetlistError(
                    f"element name {name!r} is used twice {where} (names are compared "
                    f"without case); the first is at {other_file}:{other_line}",
                    file=src.name,
                    line=line,
                )
        seen.append((cond, src.name, line))
        self.elements.append(
            ElementCard(name, key, letter, src, card, text, tokens, scope)
        )


def _may_coexist(a: tuple[tuple[int, int], ...], b: tuple[tuple[int, int], ...]) -> bool:
    """Whether two cards under these .if branch paths can both be in the circuit."""
    branches = dict(a)
    return all(branches.get(block, branch) == branch for block, branch in b)
