"""The netlist: look up elements and terminals, rename a node, append cards, write.

Only the main file is ever rewritten; included files are read for their
models, subcircuits and elements. Writing an unmodified netlist gives back its
bytes exactly; a renamed node changes only that token; appended cards go
after the last top-level element and before the first card that uses the
circuit (analysis, output, ``.control``, ``.end``; see
:mod:`parasite.netlist.placement`), with the file's own line ending.
"""

from __future__ import annotations

import re
from pathlib import Path

from parasite.errors import NetlistError
from parasite.netlist.kinds import (
    ELEMENT_KINDS,
    Layout,
    LayoutError,
    Lookup,
    ModelInfo,
    candidate_spans,
    layout,
)
from parasite.netlist.lines import PhysicalLine, ascii_lower, split_lines
from parasite.netlist.names import NODE_NAME_RULE, canonical_node, is_writable_node_name
from parasite.netlist.placement import PlacingReader, insertion_line
from parasite.netlist.reader import ElementCard, ReadResult, Scope, SourceFile, shown
from parasite.netlist.records import Element, Model, Subckt

_BIN_SUFFIX = re.compile(r"\.\d+\Z")


class _FileCache:
    """Lines of included files, read once per netlist."""

    def __init__(self) -> None:
        self._files: dict[Path, list[PhysicalLine]] = {}

    def __call__(self, path: Path) -> list[PhysicalLine]:
        if path not in self._files:
            self._files[path] = split_lines(path.read_bytes())
        return self._files[path]


def _find_model(models: dict[str, Model], key: str) -> Model | None:
    """A model by lower-case name; ``name`` also finds binned models ``name.1``,
    ``name.2``, ... (ngspice model binning)."""
    model = models.get(key)
    if model is not None:
        return model
    for name, candidate in models.items():
        if name.startswith(key + ".") and _BIN_SUFFIX.search(name[len(key) :]):
            return candidate
    return None


class Netlist:
    """A SPICE netlist read from ``path`` (the name used in messages).

    Build one with :func:`read_netlist` or :func:`parse_netlist`.
    """

    def __init__(self, data: bytes, name: str, base_dir: Path, file: Path | None = None) -> None:
        self.path = name
        self._base_dir = base_dir
        self._file = file
        self._lines = split_lines(data)
        self._cache = _FileCache()
        self._parse()

    # -- reading -----------------------------------------------------------------------------

    def _parse(self) -> None:
        main = SourceFile(self.path, self._base_dir, self._lines, main=True, path=self._file)
        reader = PlacingReader(self._cache)
        result: ReadResult = reader.read(main)
        self._result = result
        self._element_includes = reader.element_includes
        self._top: dict[str, ElementCard] = {}
        for card in result.elements:
            if card.scope is None:
                self._top.setdefault(card.key, card)
        self._layouts: dict[int, Layout | LayoutError] = {}
        self._node_names: set[str] | None = None

    @property
    def included_files(self) -> list[Path]:
        """Every file that ``.include`` / ``.lib`` cards read, resolved (inputs
        that no output may overwrite)."""
        return list(self._result.files)

    @property
    def title(self) -> str:
        """The first line of the main file (ngspice's title line)."""
        return self._result.title

    @property
    def warnings(self) -> list[str]:
        """Things ngspice accepts but that may not mean what was intended."""
        return list(self._result.warnings)

    @property
    def models(self) -> dict[str, Model]:
        """Lower-case model name -> model, from the file and its includes. A model
        defined at top level wins over one of the same name inside a subcircuit."""
        out = dict(self._result.models)
        for scope in self._result.scopes:
            for key, model in scope.models.items():
                out.setdefault(key, model)
        return out

    @property
    def subckts(self) -> dict[str, Subckt]:
        """Lower-case subcircuit name -> definition (top level first, then nested)."""
        out = {k: _public_subckt(s) for k, s in self._result.subckts.items()}
        for scope in self._result.scopes:
            out.setdefault(ascii_lower(scope.name), _public_subckt(scope))
        return out

    def _lookup(self, scope: Scope | None) -> Lookup:
        def model(name: str) -> ModelInfo | None:
            key = ascii_lower(name)
            s = scope
            while s is not None:
                found = _find_model(s.models, key)
                if found is not None:
                    return ModelInfo(found.name, found.type)
                s = s.parent
            found = _find_model(self._result.models, key)
            return None if found is None else ModelInfo(found.name, found.type)

        def ports(name: str) -> tuple[str, ...] | None:
            key = ascii_lower(name)
            s = scope
            while s is not None:
                if key in s.subckts:
                    return s.subckts[key].ports
                s = s.parent
            top = self._result.subckts.get(key)
            return None if top is None else top.ports

        return Lookup(model, ports)

    def _layout(self, card: ElementCard) -> Layout:
        cached = self._layouts.get(id(card))
        if cached is None:
            try:
                found = layout(card.tokens, self._lookup(card.scope))
                assert found is not None
                cached = found
            except LayoutError as exc:
                cached = exc
            self._layouts[id(card)] = cached
        if isinstance(cached, LayoutError):
            raise NetlistError(
                f"{cached}; card: {shown(card.text.text)!r}", file=card.source.name, line=card.line
            )
        return cached

    def _element_of(self, card: ElementCard) -> Element:
        lay = self._layout(card)
        nodes = tuple(canonical_node(card.text.text[a:b]) for a, b in lay.spans)
        return Element(
            name=card.name,
            key=card.key,
            letter=card.letter,
            nodes=nodes,
            terminal_names=lay.terminal_names,
            model=lay.model,
            line=card.line,
            file=card.source.name,
            subckt=lay.subckt,
        )

    def _card(self, name: str) -> ElementCard:
        card = self._top.get(ascii_lower(name))
        if card is None:
            raise NetlistError(
                f"no element named {name!r} at top level of the netlist (names are compared "
                "without case; elements inside .subckt bodies cannot be named)",
                file=self.path,
            )
        return card

    # -- looking up ------------------------------------------------------------------------------

    @property
    def elements(self) -> list[Element]:
        """Top-level element cards (not inside a ``.subckt``), in file order,
        included files where they are included. Conditions are not evaluated:
        the cards of every ``.if``/``.else`` branch are listed (a name may then
        appear once per branch; :meth:`element` gives the first). Raises
        :class:`NetlistError` for the first card whose nodes cannot be told."""
        return [self._element_of(c) for c in self._result.elements if c.scope is None]

    def element(self, name: str) -> Element:
        """The top-level element ``name`` (any case)."""
        return self._element_of(self._card(name))

    def card_text(self, name: str) -> str:
        """The card of top-level element ``name`` as ngspice reads it: its lines
        joined with one space, ``+`` marks and inline comments removed."""
        return self._card(name).text.text

    def terminal_names(self, name: str) -> tuple[str, ...]:
        """Lower-case terminal names of element ``name``, in card order."""
        return self._layout(self._card(name)).terminal_names

    def terminal_index(self, name: str, terminal: str) -> int:
        """0-based node index of ``terminal`` of element ``name``: a terminal name
        (any case; a name wins over a position when both would match) or a 1-based
        position such as ``"2"``."""
        card = self._card(name)
        lay = self._layout(card)
        want = ascii_lower(terminal.strip(" \t"))  # SPICE blanks only: a name may hold other control bytes
        if want in lay.terminal_names:
            return lay.terminal_names.index(want)
        if want in lay.aliases:
            return lay.aliases[want]
        if want.isdecimal() and 1 <= int(want) <= len(lay.spans):
            return int(want) - 1
        names = [*lay.terminal_names, *(a for a in lay.aliases if a not in lay.terminal_names)]
        accepted = (
            f"names {', '.join(names)} or positions 1..{len(lay.spans)}"
            if lay.spans
            else f"none: {lay.opaque}" if lay.opaque
            else "none: this element has no nodes"
        )
        raise NetlistError(
            f"element {card.name} has no terminal {terminal!r}; accepted: {accepted}",
            file=card.source.name,
            line=card.line,
        )

    def terminal_node(self, name: str, terminal: str) -> str:
        """Canonical node name on ``terminal`` of element ``name``."""
        card = self._card(name)
        a, b = self._layout(card).spans[self.terminal_index(name, terminal)]
        return canonical_node(card.text.text[a:b])

    def node_names(self) -> set[str]:
        """Canonical names of every node anywhere: top level, subcircuit bodies and
        ports, included files, ``.global``. Where a card's nodes cannot be told,
        every field that could be one of its nodes is counted (a superset)."""
        if self._node_names is None:
            names = {"0"} | set(self._result.global_nodes)
            for card in self._result.elements:
                try:
                    lay = self._layout(card)
                    # a card of unknown form: every field that could be a node
                    spans = candidate_spans(card.tokens) if lay.opaque else list(lay.spans)
                except NetlistError:
                    spans = candidate_spans(card.tokens)
                names.update(canonical_node(card.text.text[a:b]) for a, b in spans)
            for scope in self._result.scopes:
                names.update(canonical_node(p) for p in scope.ports)
            self._node_names = names
        return set(self._node_names)

    def element_names(self) -> set[str]:
        """Lower-case names of every element anywhere (subcircuit bodies and
        included files too)."""
        return {card.key for card in self._result.elements}

    # -- changing ------------------------------------------------------------------------------

    def rename_terminal(self, name: str, terminal: str, new_node: str) -> None:
        """Put ``terminal`` of element ``name`` on node ``new_node``: only that
        token of the card changes; spacing, case of the rest and comments stay."""
        card = self._card(name)
        if not card.source.main:
            raise NetlistError(
                f"element {card.name} is in the included file {card.source.name}, which is "
                "never rewritten; copy the card into the main netlist to change it",
                file=card.source.name,
                line=card.line,
            )
        if not is_writable_node_name(new_node):
            raise NetlistError(
                f"cannot rename terminal {terminal!r} of {card.name} to {new_node!r}: a node "
                f"name must be {NODE_NAME_RULE}",
                file=card.source.name,
                line=card.line,
            )
        index = self.terminal_index(name, terminal)
        a, b = self._layout(card).spans[index]
        place = card.text.locate(a, b)
        if place is None:  # a node field never spans two lines; defensive
            raise NetlistError(f"node field of {card.name} spans two lines",
                               file=card.source.name, line=card.line)
        line_index, start, end = place
        line = self._lines[line_index]
        line.text = line.text[:start] + new_node + line.text[end:]
        line.modified = True
        delta = len(new_node) - (end - start)
        for seg in card.card.segments:
            if seg.line == line_index:
                seg.end += delta
        card.retokenize()
        self._layouts.pop(id(card), None)
        self._node_names = None

    def append_cards(self, lines: list[str]) -> None:
        """Insert ``lines`` (card text without line ends) into the main file after
        its last top-level element card and before its first top-level analysis,
        output or control card (``.tran``, ``.ac``, ``.print``, ``.save``,
        ``.control``, ``.end``, ...), where every SPICE-family simulator sees them
        before the circuit is used (the rules and the reasons are in
        :mod:`parasite.netlist.placement`); never inside a ``.subckt``, ``.if``
        or ``.control`` block; with the file's line ending (an empty file gets an
        empty title line first). The result is read again, so cards in error
        raise :class:`NetlistError` and change nothing."""
        for text in lines:
            if not isinstance(text, str) or "\n" in text or "\r" in text:
                raise NetlistError(
                    f"an appended card must be one line of text without line ends: {text!r}",
                    file=self.path,
                )
        eol = next((ln.eol for ln in self._lines if ln.eol), "\n")
        at = insertion_line(self._result.main_cards, len(self._lines), self._element_includes)
        saved = [(ln, ln.text, ln.eol, ln.modified) for ln in self._lines]
        before = list(self._lines)
        new = [PhysicalLine.new(text, eol) for text in lines]
        if not self._lines:  # the first line is always the title: keep an empty one
            new.insert(0, PhysicalLine.new("", eol))
        if at == len(self._lines) and self._lines and not self._lines[-1].eol:
            self._lines[-1].eol = eol
            self._lines[-1].modified = True
        self._lines[at:at] = new
        try:
            self._parse()
        except NetlistError:
            self._lines[:] = before
            for ln, text, ln_eol, modified in saved:
                ln.text, ln.eol, ln.modified = text, ln_eol, modified
            self._parse()
            raise

    def to_bytes(self) -> bytes:
        """The main file's bytes, with any changes."""
        return b"".join(line.to_bytes() for line in self._lines)


def _public_subckt(scope: Scope) -> Subckt:
    return Subckt(scope.name, scope.ports, scope.line, scope.file)


def parse_netlist(data: bytes, name: str, base_dir: Path) -> Netlist:
    """Read netlist bytes; ``name`` is used in messages ("<stdin>" for standard
    input) and relative includes are looked for in ``base_dir``."""
    return Netlist(data, name, Path(base_dir))


def read_netlist(path: str | Path) -> Netlist:
    """Read the netlist file ``path`` (includes relative to its folder)."""
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise NetlistError(f"cannot read the netlist: {exc.strerror or exc}", file=str(path)) from None
    try:
        resolved = p.resolve()
    except (OSError, RuntimeError):
        resolved = p
    return Netlist(data, str(path), p.parent, resolved)


__all__ = ["ELEMENT_KINDS", "Netlist", "parse_netlist", "read_netlist"]
