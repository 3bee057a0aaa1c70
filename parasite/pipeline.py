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
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from geometry.model import CopperGraph, Routes
    from parasite.netlist import Netlist


@dataclass(frozen=True)
class Inputs:
    netlist: Netlist
    routes: Routes
    graph: CopperGraph
    netlist_path: str  # "-" for standard input
    routes_path: str


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


def load_inputs(netlist_path: str, routes_path: str) -> Inputs:
    """Read both files, cross-check the pins against the netlist and build the
    copper graph."""
    from geometry.graph import build_graph
    from geometry.routes import load_routes
    from parasite.pins import resolve_pins

    netlist = read_netlist_arg(netlist_path)
    routes = load_routes(routes_path)
    pins = resolve_pins(routes, netlist)
    graph = build_graph(routes, pins.nets, anchor_pins=pins.anchor_pins)
    return Inputs(netlist, routes, graph, netlist_path, routes_path)


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
    return Extraction(inputs, L, R, frequency)
