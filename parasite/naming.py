"""Names for what the augmented netlist adds: nodes and elements.

Generated names use only ``[a-z0-9_]`` (valid for ngspice and SPICE3-style
simulators), never collide (case-insensitively) with a name already in the
netlist, and depend only on the inputs, so that output is stable run to run.
"""

from __future__ import annotations

import re
from collections.abc import Iterable


def sanitize(name: str) -> str:
    """Lower-case ``name`` with every character outside ``[a-z0-9_]`` as ``_``."""
    return re.sub(r"[^a-z0-9_]", "_", name.lower()) or "_"


class NameAllocator:
    """Hands out names not in ``taken`` (compared lower-case)."""

    def __init__(self, taken: Iterable[str]) -> None:
        self._taken = {t.lower() for t in taken}

    def take(self, name: str) -> str:
        """Reserve ``name`` exactly (it must be free, or already the caller's)."""
        self._taken.add(name.lower())
        return name

    def new(self, base: str) -> str:
        """``base`` if free, else ``base`` + ``x``, ``x2``, ``x3``, ... whichever is free first."""
        candidate = base
        n = 1
        while candidate.lower() in self._taken:
            candidate = f"{base}x" if n == 1 else f"{base}x{n}"
            n += 1
        self._taken.add(candidate.lower())
        return candidate

    def taken(self) -> frozenset[str]:
        """Every name handed out or reserved so far (lower-case)."""
        return frozenset(self._taken)
