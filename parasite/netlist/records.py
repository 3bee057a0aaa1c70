"""What the reader hands out: elements, models and subcircuits (frozen dataclasses)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field


@dataclass(frozen=True)
class Element:
    """An element card.

    ``name`` as written; ``key`` lower-case; ``letter`` upper-case; ``nodes`` are
    canonical node names (see :func:`parasite.netlist.canonical_node`) in card
    order; ``terminal_names`` the lower-case name of each node's terminal;
    ``model`` the lower-case model name (None where the card has none);
    ``subckt`` the lower-case subcircuit name of an ``X`` card; ``line`` the
    1-based physical line of the card's first line in ``file``.
    """

    name: str
    key: str
    letter: str
    nodes: tuple[str, ...]
    terminal_names: tuple[str, ...]
    model: str | None
    line: int
    file: str
    subckt: str | None = None


@dataclass(frozen=True)
class Model:
    """A ``.model`` card: ``type`` lower-case (``vdmos``, ``nmos``, ``d``, ...),
    ``params`` with lower-case keys and values as written (never evaluated; a
    flag such as ``pchan`` has the value ``""``)."""

    name: str
    type: str
    params: Mapping[str, str] = field(default_factory=dict)
    line: int | None = None
    file: str | None = None


@dataclass(frozen=True)
class Subckt:
    """A ``.subckt`` definition: ``ports`` lower-case, in order."""

    name: str
    ports: tuple[str, ...]
    line: int
    file: str | None = None
