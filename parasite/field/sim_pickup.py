"""Victim pick-up from a simulated aggressor current.

After ngspice has run the augmented netlist, the aggressor loop's current is
read from one copper branch that carries it: the branch whose share of the
loop's current (per 1 A, from the loop solver) is largest in size, among the
branches that no victim loop carries (so that the victim's own current is
not in the reading; any branch of the aggressor when there is none). The
loop current is that branch current divided by the share; its slope
``di/dt`` (numerical, :func:`numpy.gradient` over ngspice's time points)
times the loops' mutual inductance ``M`` is the voltage the open victim picks
up, ``v = M di/dt`` (Faraday's law for coupled circuits). The peak ``|v|``
and its time are reported per victim.

Assumption: the chosen branch carries the aggressor loop's current only (as
in a switching cell, where the power loop's current dominates its copper);
other currents through it are read as the aggressor's. SI units (A, s, V, H).
"""

from __future__ import annotations

import re
from typing import Any

import numpy as np

from parasite.errors import SimulationError
from parasite.field.loop_report import loop_coupling_matrix


def _branch_shares(branches: list[Any], currents: np.ndarray) -> np.ndarray:
    """Each branch's current per 1 A of loop current, along the branch."""
    return np.array([currents[b.segments[0]] * b.signs[0] for b in branches])


def _loops(augmented: Any) -> list[Any]:
    from parasite.loops import loop_results

    ex = augmented.network.extraction
    return loop_results(ex.inputs.graph, ex.inputs.netlist, ex.L, ex.R)


def _branch_of(augmented: Any, results: list[Any], a: int) -> tuple[int, float] | None:
    """The branch read for loop ``a`` (module docstring) and its share, or None."""
    network = augmented.network
    if not network.branches:
        return None
    n = len(network.extraction.inputs.graph.segments)
    shares = [_branch_shares(network.branches, r.segment_currents(n)).real for r in results]
    others = np.zeros(len(network.branches), dtype=bool)
    for k, s in enumerate(shares):
        if k != a:
            others |= np.abs(s) > 1e-9
    size = np.abs(shares[a])
    free = np.where(others, 0.0, size)
    b = int(np.argmax(free)) if free.max() > 1e-6 else int(np.argmax(size))
    share = float(shares[a][b])
    return None if abs(share) <= 1e-9 else (b, share)


def save_loop_currents(deck: bytes, augmented: Any) -> bytes:
    """``deck`` (the augmented netlist) with ``.save i(L...)`` for the branch read
    of every loop, when it has ``.save`` cards (which would leave them out);
    unchanged otherwise (ngspice then saves every inductor current)."""
    text = deck.decode("latin-1")
    if not re.search(r"^[ \t]*\.save\b", text, re.IGNORECASE | re.MULTILINE):
        return deck
    results = _loops(augmented)
    names = []
    for a in range(len(results)):
        got = _branch_of(augmented, results, a)
        if got is not None:
            names.append(augmented.inductor_names[got[0]])
    if not names:
        return deck
    line = ".save " + " ".join(f"i({n})" for n in dict.fromkeys(names)) + "\n"
    ends = list(re.finditer(r"^[ \t]*\.end[ \t]*\r?$", text, re.IGNORECASE | re.MULTILINE))
    at = ends[-1].start() if ends else len(text)
    return (text[:at] + line + text[at:]).encode("latin-1")


def simulated_pickup(augmented: Any, simulation: Any, aggressor: str) -> list[dict[str, Any]]:
    """For the loop ``aggressor`` of an :class:`parasite.augment.AugmentResult`
    and the ngspice transient ``simulation`` of its netlist: per other loop, the
    peak induced voltage ``v = M di/dt`` (V) and its time (s), the branch read
    and its share. Raises :class:`parasite.errors.SimulationError` when the
    branch current is not in the simulation's output (see
    :func:`save_loop_currents`)."""
    results = _loops(augmented)
    names = [r.name for r in results]
    if aggressor not in names or len(results) < 2:
        return []
    a = names.index(aggressor)
    got = _branch_of(augmented, results, a)
    if got is None:
        return []
    b, share = got
    lname = augmented.inductor_names[b]
    try:
        i_branch = np.asarray(simulation.vector(f"i({lname})"), dtype=float)
    except KeyError:
        raise SimulationError(
            f"the simulation did not save the current of {lname}, which carries loop "
            f"{aggressor!r}; remove the netlist's .save cards or add .save i({lname})") from None
    t = np.asarray(simulation.scale, dtype=float)
    didt = np.gradient(i_branch / share, t)
    m = loop_coupling_matrix(results, augmented.network.extraction.L).mutual
    out = []
    for v, victim in enumerate(results):
        if v == a:
            continue
        volts = m[v, a] * didt
        peak = int(np.argmax(np.abs(volts)))
        out.append({"victim": victim.name, "aggressor": aggressor, "mutual": float(m[v, a]),
                    "peak_voltage": float(volts[peak]), "time": float(t[peak]),
                    "peak_didt": float(didt[peak]), "branch": lname, "share": share})
    return out
