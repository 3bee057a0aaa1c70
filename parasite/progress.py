"""Progress of long extractions on standard error.

``progress_reporter(quiet)`` gives a callable ``(done, total)`` for
:func:`parasite.pipeline.extract` (segment pairs done of all pairs), or None
when nothing should be shown: with ``--quiet``, and when standard error is not
a terminal (a makefile's log, a pipe), so that logs stay clean. The line
appears only once the work has taken longer than ``delay`` seconds, is redrawn
at most every ``interval`` seconds, and is erased when the work is done
(``done >= total``) or on :meth:`ProgressLine.close`.
"""

from __future__ import annotations

import sys
import time
from collections.abc import Callable
from typing import TextIO

DEFAULT_DELAY = 1.0  # s: quicker work shows nothing
DEFAULT_INTERVAL = 0.2  # s between redraws


class ProgressLine:
    """A one-line counter, redrawn in place with a carriage return."""

    def __init__(
        self,
        stream: TextIO,
        *,
        label: str = "segment pairs",
        delay: float = DEFAULT_DELAY,
        interval: float = DEFAULT_INTERVAL,
        clock: Callable[[], float] = time.monotonic,
    ) -> None:
        self.stream = stream
        self.label = label
        self.delay = delay
        self.interval = interval
        self.clock = clock
        self.started = clock()
        self._last_draw: float | None = None
        self._width = 0
        self._counts: tuple[int, int] = (0, 0)
        self._status = ""

    @property
    def shown(self) -> bool:
        return self._last_draw is not None

    def __call__(self, done: int, total: int) -> None:
        self._counts = (done, total)
        self._draw(finished=total > 0 and done >= total)

    def status(self, text: str) -> None:
        """Show ``text`` after the count (what the current item is doing: a long
        solve's iterations), redrawn under the same delay and interval."""
        self._status = text
        self._draw(finished=False)

    def _draw(self, *, finished: bool) -> None:
        now = self.clock()
        if now - self.started < self.delay:
            return
        if finished:  # the work is done: erase the line rather than leave it
            self.close()
            return
        if self._last_draw is not None and now - self._last_draw < self.interval:
            return
        done, total = self._counts
        percent = f" ({100.0 * done / total:.0f}%)" if total > 0 else ""
        text = f"{self.label}: {done:,} of {total:,}{percent}"
        if self._status:
            text += f"; {self._status}"
        pad = " " * max(0, self._width - len(text))
        self.stream.write("\r" + text + pad)
        self.stream.flush()
        self._width = len(text)
        self._last_draw = now

    def close(self) -> None:
        """Erase the line, if one was drawn."""
        if self._last_draw is not None:
            self.stream.write("\r" + " " * self._width + "\r")
            self.stream.flush()
            self._last_draw = None
            self._width = 0

    def __enter__(self) -> ProgressLine:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def progress_reporter(
    quiet: bool, stream: TextIO | None = None, *, label: str = "segment pairs"
) -> ProgressLine | None:
    """A :class:`ProgressLine` on ``stream`` (standard error by default), or None
    when ``quiet`` or when the stream is not a terminal."""
    stream = sys.stderr if stream is None else stream
    if quiet:
        return None
    try:
        tty = stream.isatty()
    except (AttributeError, ValueError):  # closed or unusual streams
        tty = False
    return ProgressLine(stream, label=label) if tty else None


def make_progress(stream: TextIO | None = None) -> ProgressLine | None:
    """The extraction's progress callback for a command run without ``--quiet``:
    a :class:`ProgressLine` when standard error is a terminal, else None."""
    return progress_reporter(False, stream)
