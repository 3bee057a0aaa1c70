"""The progress line of long extractions (parasite.progress)."""

from __future__ import annotations

import io

from parasite.progress import ProgressLine, make_progress, progress_reporter


class Clock:
    def __init__(self) -> None:
        self.t = 0.0

    def __call__(self) -> float:
        return self.t


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_quiet_or_not_a_terminal_shows_nothing():
    assert progress_reporter(True, Terminal()) is None
    assert progress_reporter(False, io.StringIO()) is None
    assert isinstance(progress_reporter(False, Terminal()), ProgressLine)
    assert make_progress(io.StringIO()) is None
    assert isinstance(make_progress(Terminal()), ProgressLine)


def test_nothing_before_the_delay_then_counts_then_erased():
    out, clock = io.StringIO(), Clock()
    line = ProgressLine(out, clock=clock, delay=1.0, interval=0.2)
    line(10, 1000)
    clock.t = 0.5
    line(400, 1000)
    assert out.getvalue() == ""
    clock.t = 1.1
    line(500, 1000)
    assert out.getvalue() == "\rsegment pairs: 500 of 1,000 (50%)"
    clock.t = 1.15  # within the redraw interval: skipped
    line(600, 1000)
    assert out.getvalue().count("\r") == 1
    clock.t = 1.5
    line(999, 1000)
    assert out.getvalue().endswith("\rsegment pairs: 999 of 1,000 (100%)")
    clock.t = 1.51  # done: the line is erased at once
    line(1000, 1000)
    assert out.getvalue().endswith("\r" + " " * len("segment pairs: 999 of 1,000 (100%)") + "\r")
    n = len(out.getvalue())
    line.close()
    assert len(out.getvalue()) == n


def test_close_without_drawing_writes_nothing():
    out = io.StringIO()
    with ProgressLine(out, clock=Clock()) as line:
        line(1, 2)
    assert out.getvalue() == ""


def test_status_follows_the_count_and_goes_with_the_line():
    """A long item's status (a loop's GMRES iterations) is shown after the count, under
    the same delay and interval, and erased with the line when the work is done."""
    out, clock = io.StringIO(), Clock()
    line = ProgressLine(out, label="loops solved", clock=clock, delay=1.0, interval=0.2)
    line(0, 3)
    clock.t = 1.2
    line.status("hot loop: GMRES iteration 7, residual 3.0e-03 (stops at 1e-06)")
    assert out.getvalue().endswith(
        "loops solved: 0 of 3 (0%); hot loop: GMRES iteration 7, residual 3.0e-03 "
        "(stops at 1e-06)")
    clock.t = 1.25  # within the redraw interval: skipped
    line.status("hot loop: GMRES iteration 8")
    assert "iteration 8" not in out.getvalue()
    clock.t = 1.6
    line(3, 3)  # done: erased
    assert out.getvalue().endswith("\r")
