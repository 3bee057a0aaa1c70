"""The data flow of every subcommand: read the netlist and the routes file,
build the copper graph, extract the partial elements.

``load_inputs`` -> :class:`Inputs`; ``extract`` -> :class:`Extraction`.
Nothing here prints; errors are :class:`parasite.errors.ParasiteError`.
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Literal

import numpy as np

if TYPE_CHECKING:
    from geometry.model import CopperGraph, Routes
    from parasite.extract.operator import FastInductance
    from parasite.netlist import Netlist


@dataclass(frozen=True)
class Inputs:
    netlist: Netlist
    routes: Routes
    graph: CopperGraph
    netlist_path: str  # "-" for standard input
    routes_path: str
    inductance: str = "dense"  # "dense" (N x N matrix) or "fast" (the operator), see check_size


@dataclass(frozen=True)
class Extraction:
    inputs: Inputs
    L: np.ndarray  # (N, N) H, partial inductance matrix of the segments, images included
    R: np.ndarray  # (N,) ohm, at ``frequency`` (None: DC)
    frequency: float | None  # Hz


def read_netlist_arg(netlist_path: str) -> Netlist:
    """Read the NETLIST argument; ``-`` reads standard input (includes relative
    to the working folder)."""
    from parasite.netlist import parse_netlist, read_netlist

    if netlist_path == "-":
        return parse_netlist(sys.stdin.buffer.read(), "<stdin>", Path.cwd())
    return read_netlist(netlist_path)


def inputs_of(netlist: Netlist, routes: Routes, netlist_path: str, routes_path: str,
              inductance: str = "dense") -> Inputs:
    """Cross-check the pins of ``routes`` against ``netlist`` and build the copper graph;
    ``inductance`` ``dense``, ``fast`` or ``auto`` (:func:`check_size`)."""
    from geometry.graph import build_graph
    from parasite.pins import resolve_pins

    pins = resolve_pins(routes, netlist)
    graph = build_graph(routes, pins.nets, anchor_pins=pins.anchor_pins)
    method = check_size(graph, routes_path, inductance)
    return Inputs(netlist, routes, graph, netlist_path, routes_path, method)


INDUCTANCE_CHOICES = ("auto", "dense", "fast")
"""``--inductance`` of ``report`` and ``check``: how the partial inductance is held."""


def check_size(graph: CopperGraph, routes_path: str, inductance: str = "dense") -> str:
    """The way the inductance will be held, ``dense`` or ``fast``, after refusing a board
    too big for it, before any matrix is computed.

    ``dense``: at most :data:`geometry.limits.MAX_PIECES` pieces whose dense matrices
    fit in memory (:func:`parasite.extract.memory.check_dense_fits`). ``fast`` (the
    inductance operator, :class:`parasite.extract.operator.FastInductance`): at most
    :data:`geometry.limits.MAX_PIECES_FAST` pieces whose near field and solves fit
    (:func:`parasite.extract.memory.check_fast_fits`). ``auto``: dense when the board
    passes the dense checks, else fast."""
    from parasite.extract.memory import dense_fits

    n = len(graph.segments)
    if inductance not in INDUCTANCE_CHOICES:
        raise ValueError(f"inductance must be one of {INDUCTANCE_CHOICES}; got {inductance!r}")
    if inductance == "auto":
        from geometry.limits import MAX_PIECES

        inductance = "dense" if n <= MAX_PIECES and dense_fits(n) else "fast"
    if inductance == "fast":
        _check_fast_size(graph, routes_path)
        return "fast"
    _check_dense_size(graph, routes_path)
    return "dense"


def _check_fast_size(graph: CopperGraph, routes_path: str) -> None:
    from geometry.errors import RoutesError
    from geometry.limits import MAX_PIECES_FAST
    from parasite.extract.memory import check_fast_fits
    from parasite.extract.operator import (
        BOARD_FAR_FIELD,
        BOARD_NEAR_SCALE,
        BOARD_SECTION_RATIO,
        count_near_pairs,
    )

    n = len(graph.segments)
    if n > MAX_PIECES_FAST:
        raise RoutesError(f"the copper makes {n} pieces; at most {MAX_PIECES_FAST} are accepted "
                          f"with the inductance operator (see 'Limits' in docs/routes-file.md)",
                          file=routes_path)
    check_fast_fits(n, count_near_pairs(graph.arrays, BOARD_SECTION_RATIO, BOARD_NEAR_SCALE,
                                         BOARD_FAR_FIELD) if n else 0,
                    routes_path)


def _check_dense_size(graph: CopperGraph, routes_path: str) -> None:
    from geometry.errors import RoutesError
    from geometry.limits import MAX_PIECES
    from parasite.extract.memory import check_dense_fits

    n = len(graph.segments)
    if n > MAX_PIECES:
        raise RoutesError(f"the copper makes {n} pieces; at most {MAX_PIECES} are accepted (their "
                          f"inductance matrix would take {8 * n * n / 1e9:.1f} GB; a limit far "
                          f"above any real board, see 'Limits' in docs/routes-file.md)",
                          file=routes_path)
    check_dense_fits(n, routes_path)


def load_inputs(netlist_path: str, routes_path: str, inductance: str = "dense") -> Inputs:
    """Read both files, cross-check the pins against the netlist and build the
    copper graph (``inductance``: :func:`check_size`)."""
    from geometry.routes import load_routes

    netlist = read_netlist_arg(netlist_path)
    routes = load_routes(routes_path)
    return inputs_of(netlist, routes, netlist_path, routes_path, inductance)


def _bytes(text: str | bytes) -> bytes:
    return text if isinstance(text, bytes) else text.encode("utf-8", errors="surrogateescape")


def inputs_from_text(netlist: str | bytes, routes: str | bytes, *,
                     routes_format: Literal["toml", "json"] = "toml",
                     netlist_name: str = "<netlist>", routes_name: str = "<routes>",
                     include_dir: str | Path | None = None) -> Inputs:
    """:func:`load_inputs` for text in memory: the names stand for the files in
    messages and in the report; includes are looked for in ``include_dir``
    (default: the working folder)."""
    from geometry.routes import parse_routes
    from parasite.netlist import parse_netlist

    base = Path.cwd() if include_dir is None else Path(include_dir)
    parsed = parse_netlist(_bytes(netlist), netlist_name, base)
    return inputs_of(parsed, parse_routes(_bytes(routes), routes_name, routes_format),
                     netlist_name, routes_name)


def extract(
    inputs: Inputs,
    *,
    frequency: float | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> Extraction:
    """Partial inductance matrix and resistances of every segment of the graph."""
    from parasite.extract import inductance_matrix, resistances

    arrays = inputs.graph.arrays
    if len(arrays) == 0:
        return Extraction(inputs, np.zeros((0, 0)), np.zeros(0), frequency)
    L = inductance_matrix(arrays, progress=progress)
    R = resistances(arrays, inputs.routes.copper, frequency)
    check_finite(inputs, L, R)
    return Extraction(inputs, L, R, frequency)


@dataclass(frozen=True)
class FastExtraction:
    """The extraction of the fast path: the inductance as an operator, no N x N array."""

    inputs: Inputs
    op: FastInductance  # H, near field exact and sparse, far field fast
    R: np.ndarray  # (N,) ohm, at ``frequency`` (None: DC)
    frequency: float | None  # Hz


def extract_fast(
    inputs: Inputs,
    *,
    frequency: float | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> FastExtraction:
    """The inductance operator (:class:`parasite.extract.operator.FastInductance`;
    ``progress`` counts the near field's rows done) and the resistances of every segment."""
    from parasite.errors import ExtractionError
    from parasite.extract import resistances
    from parasite.extract.operator import (
        BOARD_EPS,
        BOARD_FAR_FIELD,
        BOARD_NEAR_SCALE,
        BOARD_SECTION_RATIO,
        BOARD_WIDTH_POINTS,
        FastInductance,
    )

    arrays = inputs.graph.arrays
    if len(arrays) == 0:
        raise ExtractionError("no copper: the inductance operator needs segments",
                              file=inputs.routes_path)
    op = FastInductance(arrays, section_ratio=BOARD_SECTION_RATIO, near_scale=BOARD_NEAR_SCALE,
                        eps=BOARD_EPS, width_points=BOARD_WIDTH_POINTS,
                        far_field=BOARD_FAR_FIELD, progress=progress)
    R = resistances(arrays, inputs.routes.copper, frequency)
    check_finite(inputs, op.diagonal(), R)
    return FastExtraction(inputs, op, R, frequency)


def check_finite(inputs: Inputs, L: np.ndarray, R: np.ndarray) -> None:
    """Refuse a non-finite or non-positive self term (H) or resistance (ohm),
    naming the routes entry of the first such segment (its key path and line).
    ``L``: the matrix (N, N), or its diagonal (N,) on the fast path."""
    from parasite.errors import ExtractionError

    diag = L if L.ndim == 1 else np.diag(L)
    bad = ~np.isfinite(R) | (R < 0) | ~np.isfinite(diag) | (diag <= 0)
    if L.ndim == 2:
        bad |= ~np.isfinite(L).all(axis=1)
    if not bad.any():
        return
    seg = inputs.graph.segments[int(np.flatnonzero(bad)[0])]
    routes = inputs.routes
    line = routes_line(routes, seg.source)
    raise ExtractionError(
        f"piece {seg.id} (length {seg.length:.3g} m, width {seg.width:.3g} m) gives a "
        f"self inductance of {diag[seg.index]:.3g} H and a resistance of "
        f"{R[seg.index]:.3g} ohm: its sizes are outside what the formulas cover",
        file=inputs.routes_path, line=line, key=seg.source)


def routes_line(routes: Routes, source: str) -> int | None:
    """The line of the routes entry at key path ``source`` (``trace[2]``), if known."""
    kind, _, rest = source.partition("[")
    try:
        entries = {"trace": routes.traces, "via": routes.vias, "probe": routes.probes}[kind]
        return getattr(entries[int(rest.partition("]")[0])], "line", None)
    except (KeyError, ValueError, IndexError):
        return None
