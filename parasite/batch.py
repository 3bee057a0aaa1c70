"""Reports of a batch of boards, each board one independent item of
:func:`parasite.schedule.run_map`: in this process one after the other by default, or
spread over the workers of a Dask cluster (``scheduler`` address, a ``Client``, or
``$PARASITE_SCHEDULER``), with the same numbers either way: the same bytes on the fast
path; on the dense path the same bytes when this process starts with
``OPENBLAS_NUM_THREADS=1`` as Dask's workers do, else equal to rounding (OpenBLAS
started with more threads and limited to one afterwards rounds the eigen
decompositions differently: measured 4e-13 relative in the minimum eigenvalue).

Each item is what ``parasite report NETLIST ROUTES --format json --inductance HOW``
writes for that board (:func:`board_report`; the dense path with its circuit model,
or the inductance operator for a board too big for the matrix). Every worker needs
the same ``parasite`` installed and read access to the boards' files (docs/scale.md).

Estimates from closed-form partial inductances: confirm them by measurement.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

from parasite.schedule import run_map


def board_report(item: tuple[str, str, str]) -> bytes:
    """The JSON report (bytes) of one board ``(netlist path, routes path, inductance)``,
    ``inductance`` one of ``auto``, ``dense``, ``fast``. Raises the package's errors
    (:class:`parasite.errors.ParasiteError`, naming the file) for bad input."""
    from parasite.augment import augment_inputs
    from parasite.errors import ParasiteError
    from parasite.pipeline import extract_fast, load_inputs
    from parasite.report import format_report
    from parasite.report_fast import analyse_fast

    netlist, routes, inductance = item
    inputs = load_inputs(netlist, routes, inductance)
    if inputs.inductance == "fast":
        try:
            report = analyse_fast(extract_fast(inputs))
        except ParasiteError as exc:
            if exc.file is None:  # the copper is the routes file's: name it
                exc.file = inputs.routes_path
            raise
    else:
        report = augment_inputs(inputs).report
    return format_report(report, "json", "segments").encode()


def report_boards(boards: Sequence[tuple[str, str]], *, inductance: str = "auto",
                  scheduler: str | Any | None = None,
                  board_done: Callable[[int], None] | None = None) -> list[bytes]:
    """:func:`board_report` of every ``(netlist path, routes path)`` in ``boards``, in
    the order given, each board one item of :func:`parasite.schedule.run_map`;
    ``board_done(index)`` is called as each board's report arrives."""
    items = [(str(n), str(r), inductance) for n, r in boards]
    return run_map(board_report, items, scheduler=scheduler, item_done=board_done)
