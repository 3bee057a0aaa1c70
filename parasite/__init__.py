"""parasite: the inductance and resistance of routed copper, wired into a SPICE netlist.

The library never prints and never exits; every input error is a
:class:`parasite.errors.ParasiteError` that carries the file and the place.

Library API (no files needed; loaded on first use, so that ``import parasite``
stays light)::

    result = parasite.augment_text(netlist_text, routes_text, min_coupling=None,
                                   frequency=None, keep_segments=False,
                                   routes_format="toml", include_dir=None)
    result.netlist_text   # the augmented netlist
    result.report         # the JSON-ready report (SI units)
    parasite.report_of(netlist_text, routes_text, fmt="text")  # as ``parasite report``
    parasite.augment_files(netlist_path, routes_path, ...)     # the same from files
"""

from __future__ import annotations

from typing import Any

__version__ = "0.1.0"

_LAZY = {
    "augment_text": "parasite.augment",
    "augment_files": "parasite.augment",
    "report_of": "parasite.augment",
    "AugmentResult": "parasite.augment",
    "ParasiteError": "parasite.errors",
}

__all__ = ["__version__", *_LAZY]


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(_LAZY[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'parasite' has no attribute {name!r}")
