"""Where independent pieces of work run: in this process, or on a Dask cluster.

Independent work (frequency points of a sweep, blocks of the near field, boards of
a batch) goes through :func:`run_map`. Without a scheduler address it runs in this
process, one item after the other, with nothing to set up; with an address (the
``scheduler`` argument, else the environment variable ``PARASITE_SCHEDULER``) it is
sent to that ``dask.distributed`` scheduler (``tcp://host:8786``), or to a
``distributed.Client`` passed in. Results come back in the order of the items and are
the same numbers whichever way the work ran (each item is computed by the same
function on the same inputs, with the numerical libraries on one thread: see
:func:`_single_threaded`). How to start a cluster: docs/scale.md.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Sequence
from typing import Any, TypeVar

from parasite.errors import ParasiteError

ENV = "PARASITE_SCHEDULER"
"""Environment variable naming a Dask scheduler address used when none is given."""

T = TypeVar("T")
R = TypeVar("R")


def scheduler_address(scheduler: str | None = None) -> str | None:
    """The address to use: the argument, else ``$PARASITE_SCHEDULER``, else None (in
    process). An empty string means in process too."""
    address = scheduler if scheduler is not None else os.environ.get(ENV)
    return address or None


def _single_threaded(func: Callable[[T], R]) -> Callable[[T], R]:
    """func with the BLAS thread pools limited to one thread while it runs, so that a
    reduction is summed in the same order in this process and in a worker (Dask's
    workers start with one BLAS thread)."""
    return _Single(func)


class _Single:
    def __init__(self, func: Callable[[Any], Any]) -> None:
        self.func = func

    def __call__(self, item: Any) -> Any:
        from threadpoolctl import threadpool_limits

        with threadpool_limits(limits=1):
            return self.func(item)


def run_map(func: Callable[[T], R], items: Iterable[T], *,
            scheduler: str | Any | None = None) -> list[R]:
    """[func(item) for item in items], in process or on a Dask cluster (module
    docstring). ``func`` and the items must be picklable for a cluster (a module-level
    function, arrays)."""
    work = list(items)
    task = _single_threaded(func)
    if scheduler is not None and not isinstance(scheduler, str):
        return _on_client(scheduler, task, work)
    address = scheduler_address(scheduler)
    if address is None:
        return [task(x) for x in work]
    try:
        from distributed import Client
    except ImportError as exc:  # pragma: no cover - dask is a dependency
        raise ParasiteError("a scheduler address needs the 'distributed' package "
                            "(pip install 'dask[distributed]')") from exc
    try:
        client = Client(address, timeout=30, set_as_default=False)
    except OSError as exc:
        raise ParasiteError(f"cannot reach the Dask scheduler at {address!r} ({exc}); "
                            f"start one with 'dask scheduler' or unset {ENV}") from exc
    with client:
        return _on_client(client, task, work)


def _apply(item: Any, task: Callable[[Any], Any]) -> Any:
    return task(item)


def _on_client(client: Any, task: Callable[[T], R], work: Sequence[T]) -> list[R]:
    # the task carries the shared data (matrices): sent once to every worker, then
    # referred to by the per-item tasks
    shared = client.scatter(task, broadcast=True, hash=False)
    futures = client.map(_apply, work, task=shared, pure=False)
    return list(client.gather(futures))
