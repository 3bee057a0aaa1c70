"""Will the dense inductance matrix and its solves fit in this machine's memory?

The dense path holds the N x N partial inductance matrix (float64) and, in the
network, the solves and the copies that the threshold choice and the couplings
work on. Peak memory measured at about 3.8 times the matrix alone (7,928 cells:
0.50 GB matrix, 1.9 GiB peak; benchmarks/RESULTS.md, ``bench_pour.py``), so the
estimate is ``DENSE_FACTOR * 8 N^2`` bytes. A board past that is refused before
the matrix is allocated, with what it would need, instead of being killed by the
operating system part-way.

The fast path (:class:`parasite.extract.operator.FastInductance`, ``augment``,
``report``, ``check`` and ``batch`` with ``--inductance fast``) holds no N x N array:
its memory grows with the exact near pairs (sparse near field, its correction, their construction and the
loop solves' sparse preconditioner) and with the segments (the copper graph, the
multipole sums' points and tree). :func:`fast_bytes` estimates it as
``FAST_BYTES_BASE`` (the interpreter, the compiled kernels and the libraries) plus
``FAST_BYTES_PER_PAIR`` per near pair plus ``FAST_BYTES_PER_SEGMENT`` per segment
(figures from ``benchmarks/bench_board_scale.py``, rounded up). Measured end to end
on the invented meshed power stage (near field built by blocks: 40 bytes held per pair,
about 52 at the build's peak; loops by GMRES with the diagonal constraint
preconditioner), near radii x0.6: 1,422 MiB at 22,013 segments (4.38 M near pairs)
and 4,609 MiB at 98,547 (17.77 M); above the base and 52 bytes per pair that is 35
and 37 kB per segment (the copper graph's objects, the report's entries, the
multipole sums' trees and the GMRES basis). So the constants are 64 bytes per pair
and 40 kB per segment; at near radii x0.7 (the board's setting) the runs measured
1,446 and 4,921 MiB (5.81 M and 23.76 M pairs) against estimates of 1,706 and 5,721.
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


FAST_BYTES_BASE = 512.0 * 2**20 + 3 * 256 * 2**20
"""Bytes of a fast-path run before any board-sized array (measured about 300 MB), plus
768 MiB for the layer grids: their kernels' spectra (at most
:data:`parasite.extract.plane_grid.MAX_BYTES`, 256 MiB), one batch of a product's
spectra (``CHUNK_BYTES``, 128 MiB) with its real copies, and the long conductors'
columns (``MAX_LONG_BYTES``, 256 MiB)."""
FAST_BYTES_PER_PAIR = 64.0
"""Peak bytes per exact near pair on the fast path (measured 52, rounded up)."""
FAST_BYTES_PER_SEGMENT = 40_000.0
"""Peak bytes per segment on the fast path besides the near pairs (measured 35-37 kB,
rounded up)."""


def fast_bytes(n: int, near_pairs: int) -> float:
    """Estimated peak bytes of a fast-path run over ``n`` segments with ``near_pairs``
    exact near pairs (``i < j``)."""
    return (FAST_BYTES_BASE + FAST_BYTES_PER_SEGMENT * float(n)
            + FAST_BYTES_PER_PAIR * float(near_pairs))


def dense_fits(n: int) -> bool:
    """Whether the dense estimate of ``n`` pieces fits in the memory available."""
    have = available_memory()
    return have is None or dense_bytes(n) <= have


def check_fast_fits(n: int, near_pairs: int, routes_path: str | None) -> None:
    """Refuse a fast-path run whose estimate (:func:`fast_bytes`) exceeds the memory
    available, naming the routes file, the need and the remedies."""
    have = available_memory()
    need = fast_bytes(n, near_pairs)
    if have is None or need <= have:
        return
    raise ExtractionError(
        f"{n} pieces of copper with {near_pairs} near pairs need about {need / 2**30:.3g} GiB "
        f"for the fast inductance operator and its loop solves, more than the "
        f"{have / 2**30:.3g} GiB available ({ENV} or the system's free memory): use coarser "
        f"pour cells (`cell` of each [[pour]]: the segments fall with the square of the "
        f"cell size), or fewer pieces (import only the nets that matter), or a machine "
        f"with more memory", file=routes_path)


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
        f"matter), or a machine with more memory; with `--inductance fast` (`augment`, "
        f"`report`, `check`, `batch`) no dense matrix is held", file=routes_path)
