"""Which simulated edge each measured edge is compared with."""

from __future__ import annotations

from parasite.ring.metrics import RingMetrics


def pair_edges(measured: list[RingMetrics], simulated: list[RingMetrics],
               rule: str | int = "order") -> list[int | None]:
    """For each measured edge, the index of the simulated edge it is compared
    with (or None). ``rule``: ``"order"`` pairs the k-th measured edge of a
    direction with the k-th simulated edge of that direction (first with
    first); ``"last"`` pairs every measured edge with the last simulated edge
    of its direction (a steady state); an integer N pairs the first measured
    edge with simulated edge N (1-based) and each next measured edge with the
    next simulated edge of its direction after that."""
    out: list[int | None] = []
    if rule == "last":
        for m in measured:
            same = [j for j, s in enumerate(simulated) if s.direction == m.direction]
            out.append(same[-1] if same else None)
        return out
    if rule == "order":
        seen: dict[int, int] = {}
        for m in measured:
            k = seen.get(m.direction, 0)
            seen[m.direction] = k + 1
            same = [j for j, s in enumerate(simulated) if s.direction == m.direction]
            out.append(same[k] if k < len(same) else None)
        return out
    j = int(rule) - 1
    for i, m in enumerate(measured):
        if i > 0:
            j += 1
            while j < len(simulated) and simulated[j].direction != m.direction:
                j += 1
        ok = 0 <= j < len(simulated) and simulated[j].direction == m.direction
        out.append(j if ok else None)
    return out
