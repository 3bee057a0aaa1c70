"""Running ngspice (and gnucap, :mod:`parasite.spice.gnucap`) and reading what they write.

``run_ngspice`` runs ngspice in batch mode as a subprocess and returns the
waveforms of its raw file. Batch mode was chosen over PySpice's shared-library
interface after measuring both (``benchmarks/bench_spice.py``, figures in
``benchmarks/RESULTS.md`` and ``docs/ring.md``): it was as fast, a crash of
ngspice (a segmentation fault on some bad coupling statements) cannot take the
Python process with it, and a run can be killed on a timeout.
"""

from __future__ import annotations

from parasite.spice.gnucap import GnucapResult, run_gnucap
from parasite.spice.raw import Plot, read_raw, read_raw_bytes
from parasite.spice.run import SimulationResult, run_ngspice

__all__ = ["GnucapResult", "Plot", "SimulationResult", "read_raw", "read_raw_bytes", "run_gnucap",
           "run_ngspice"]
