"""Segment currents of a routes file's loop, per 1 A of loop current, for the
tests: the loop's element hops inject the current at the pins' nodes and
:func:`parasite.loops.solve_port` divides it over the copper of the nets the
loop visits (every terminal of these test boards is placed by a [[pin]])."""

from __future__ import annotations

import numpy as np

from geometry.model import CopperGraph


def loop_currents(graph: CopperGraph, path: list[str], L: np.ndarray, R: np.ndarray,
                  frequency: float = 0.0) -> np.ndarray:
    """(N,) currents (A per 1 A) over all segments of ``graph`` for the loop through
    the terminals ``path`` (as written in the pins), at ``frequency`` (Hz)."""
    from parasite.loops import solve_port

    where = {pn.pin.terminal.lower(): pn for pn in graph.pins}
    stops = [where[t.lower()] for t in path]
    injection = np.zeros(len(graph.nodes))
    nets = set()
    for j, a in enumerate(stops):
        b = stops[(j + 1) % len(stops)]
        if a.pin.element == b.pin.element:
            injection[a.node] -= 1.0
            injection[b.node] += 1.0
        else:
            assert a.net == b.net
            nets.add(a.net)
    wanted = [k for k, name in enumerate(graph.nets) if name in nets]
    seg = np.flatnonzero(np.isin(graph.arrays.net_index, wanted))
    sol = solve_port(graph.arrays.node_from[seg].astype(np.int64),
                     graph.arrays.node_to[seg].astype(np.int64), len(graph.nodes), injection,
                     L[np.ix_(seg, seg)], R[seg], frequency)
    out = np.zeros(len(graph.segments), dtype=sol.currents.dtype)
    out[seg] = sol.currents
    return out
