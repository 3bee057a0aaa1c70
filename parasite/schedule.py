"""Where independent pieces of work run: in this process, or on a Dask cluster.

Independent work (frequency points of a sweep, blocks of the near field, boards of
a batch) goes through :func:`run_map`. Without a scheduler address it runs in this
process, one item after the other, with nothing to set up; with an address (the
``scheduler`` argument, else the environment variable ``PARASITE_SCHEDULER``) it is
sent to that ``dask.distributed`` scheduler (``tcp://host:8786``), or to a
``distributed.Client`` passed in. Results come back in the order of the items and are
the same numbers whichever way the work ran (each item is computed by the same
function on the same inputs, with the numerical libraries on one thread: see
:func:`_single_threaded`). The command line's ``--scheduler ADDRESS`` opens one
connection for the whole command with :func:`connected`, before any work starts.
How to start a cluster: docs/scale.md.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager
from contextvars import ContextVar
from typing import Any, TypeVar

from parasite.errors import ParasiteError

ENV = "PARASITE_SCHEDULER"
"""Environment variable naming a Dask scheduler address used when none is given."""

CONNECT_TIMEOUT = 30.0
"""Seconds to wait for a Dask scheduler to answer."""

T = TypeVar("T")
R = TypeVar("R")

_ACTIVE: ContextVar[Any] = ContextVar("parasite_scheduler_client", default=None)


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
            scheduler: str | Any | None = None, threads: bool = False,
            item_done: Callable[[int], None] | None = None) -> list[R]:
    """[func(item) for item in items], in process or on a Dask cluster (module
    docstring). ``func`` and the items must be picklable for a cluster (a module-level
    function, arrays). Without ``scheduler`` the connection of :func:`connected` is
    used if one is open, else ``$PARASITE_SCHEDULER``. In process, ``threads`` runs
    the items on a thread per core (for work that is numpy/LAPACK only, which
    releases the interpreter lock; not numba's parallel loops): the same numbers,
    as every item still runs with one BLAS thread. ``item_done(index)`` is called in
    this process as each item's result arrives (in any order on a cluster)."""
    work = list(items)
    task = _single_threaded(func)
    if scheduler is None:
        scheduler = _ACTIVE.get()
    if scheduler is not None and not isinstance(scheduler, str):
        return _on_client(scheduler, task, work, item_done)
    address = scheduler_address(scheduler)
    if address is None:
        return _in_process(func, work, threads, item_done)
    with _connect(address) as client:
        return _on_client(client, task, work, item_done)


def runs_here(scheduler: str | Any | None = None) -> bool:
    """Whether :func:`run_map` with this ``scheduler`` argument runs in this process."""
    if scheduler is None:
        scheduler = _ACTIVE.get()
    if scheduler is not None and not isinstance(scheduler, str):
        return False
    return scheduler_address(scheduler) is None


def _in_process(func: Callable[[T], R], work: list[T], threads: bool,
                item_done: Callable[[int], None] | None = None) -> list[R]:
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1):  # once for all the items: as _single_threaded
        n = min(len(work), os.cpu_count() or 1) if threads else 1
        if n <= 1:
            out = []
            for i, x in enumerate(work):
                out.append(func(x))
                if item_done is not None:
                    item_done(i)
            return out
        from concurrent.futures import ThreadPoolExecutor

        with ThreadPoolExecutor(max_workers=n) as pool:
            out = []
            for i, result in enumerate(pool.map(func, work)):
                out.append(result)
                if item_done is not None:
                    item_done(i)
            return out


def _connect(address: str) -> Any:
    """A ``distributed.Client`` of the scheduler at ``address``; ParasiteError naming
    the address when it does not answer (a refused TCP connection is told at once,
    not after the client's timeout)."""
    try:
        from distributed import Client
    except ImportError as exc:  # pragma: no cover - dask is a dependency
        raise ParasiteError("a scheduler address needs the 'distributed' package "
                            "(pip install 'dask[distributed]')") from exc
    hint = f"start one with 'dask scheduler' (docs/scale.md), or give no --scheduler and unset {ENV}"
    if address.startswith("tcp://"):
        import socket
        from urllib.parse import urlsplit

        try:
            where = urlsplit(address)
            host, port = where.hostname, where.port
        except ValueError as exc:
            raise ParasiteError(f"the Dask scheduler address {address!r} is not "
                                f"tcp://HOST:PORT ({exc})") from exc
        if not host or port is None:
            raise ParasiteError(f"the Dask scheduler address {address!r} is not tcp://HOST:PORT")
        try:
            socket.create_connection((host, port), timeout=CONNECT_TIMEOUT).close()
        except OSError as exc:
            raise ParasiteError(f"cannot reach the Dask scheduler at {address!r} ({exc}); "
                                f"{hint}") from exc
    try:
        return Client(address, timeout=CONNECT_TIMEOUT, set_as_default=False)
    except (OSError, ValueError, TypeError) as exc:
        raise ParasiteError(f"cannot reach the Dask scheduler at {address!r} ({exc}); "
                            f"{hint}") from exc


@contextmanager
def connected(scheduler: str | None = None) -> Iterator[Any]:
    """Within the block, :func:`run_map` calls that name no scheduler run on the one
    at ``scheduler`` (else ``$PARASITE_SCHEDULER``; none or empty: in process).
    The connection is made here, before any work: an unreachable address is a
    ParasiteError at once. Yields the client, or None in process."""
    address = scheduler_address(scheduler)
    if address is None:
        token = _ACTIVE.set("")  # in process, whatever $PARASITE_SCHEDULER says
        try:
            yield None
        finally:
            _ACTIVE.reset(token)
        return
    with _connect(address) as client:
        token = _ACTIVE.set(client)
        try:
            yield client
        finally:
            _ACTIVE.reset(token)


def _apply(item: Any, task: Callable[[Any], Any]) -> Any:
    return task(item)


def _on_client(client: Any, task: Callable[[T], R], work: Sequence[T],
               item_done: Callable[[int], None] | None = None) -> list[R]:
    # the task carries the shared data (matrices): sent once to every worker, then
    # referred to by the per-item tasks
    shared = client.scatter(task, broadcast=True, hash=False)
    futures = client.map(_apply, work, task=shared, pure=False)
    if item_done is not None and futures:
        from distributed import as_completed

        index = {f.key: i for i, f in enumerate(futures)}
        for future in as_completed(futures, loop=client.loop):
            if future.status == "error":
                break  # gather raises the item's error
            item_done(index[future.key])
    return list(client.gather(futures))
