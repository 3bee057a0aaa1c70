"""Will the dense inductance matrix and its solves fit in this machine's memory?

The dense path holds the N x N partial inductance matrix (float64) and, in the
network, the solves and the copies that the threshold choice and the couplings
work on. Peak memory measured at about 3.8 times the matrix alone (7,928 cells:
0.50 GB matrix, 1.9 GiB peak; benchmarks/RESULTS.md, ``bench_pour.py``), so the
estimate is ``DENSE_FACTOR * 8 N^2`` bytes. A board past that is refused before
the matrix is allocated, with what it would need, instead of being killed by the
operating system part-way.
"""

from __future__ import annotations

import os

from parasite.errors import ExtractionError

DENSE_FACTOR = 4.0
"""Peak memory of a dense run over the bytes of the N x N float64 matrix (measured 3.8)."""
ENV = "PARASITE_MEMORY_LIMIT"
"""Environment variable: the memory (bytes, SPICE-style number: ``8g``) a run may use."""


def available_memory() -> int | None:
    """Bytes the run may use: ``$PARASITE_MEMORY_LIMIT``, else the kernel's
    ``MemAvailable`` (Linux ``/proc/meminfo``), else None (unknown: no check)."""
    from geometry.values import parse_spice_number

    text = os.environ.get(ENV)
    if text:
        value = parse_spice_number(text.strip())
        if value is None or not value > 0:
            raise ExtractionError(f"{text!r}: give a positive number of bytes, e.g. 8g",
                                  file=f"environment variable {ENV}")
        return int(value)
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        return None
    return None


def dense_bytes(n: int) -> float:
    """Estimated peak bytes of a dense run over ``n`` pieces of copper."""
    return DENSE_FACTOR * 8.0 * float(n) ** 2


def check_dense_fits(n: int, routes_path: str | None) -> None:
    """Refuse ``n`` pieces when the dense estimate exceeds the memory available,
    naming the routes file, the need and the remedies."""
    have = available_memory()
    need = dense_bytes(n)
    if have is None or need <= have:
        return
    raise ExtractionError(
        f"{n} pieces of copper need about {need / 2**30:.3g} GiB for the dense inductance "
        f"matrix and its solves ({DENSE_FACTOR:g} x 8 N^2 bytes), more than the "
        f"{have / 2**30:.3g} GiB available ({ENV} or the system's free memory): use coarser "
        f"pour cells (`cell` of each [[pour]]), or fewer pieces (import only the nets that "
        f"matter), or a machine with more memory", file=routes_path)
