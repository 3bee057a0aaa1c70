"""Options shared by several subcommands."""

from __future__ import annotations

from typing import Any

import click

from geometry.limits import FREQUENCY_RANGE_HZ
from parasite.units import parse_spice_number


class SpiceNumber(click.ParamType):
    """A number given as ``1e8``, ``100meg`` or ``100MHz``."""

    name = "number"

    def __init__(self, minimum: float | None = None, exclusive: bool = True,
                 maximum: float | None = None, max_exclusive: bool = False,
                 unit: str = "") -> None:
        self.minimum = minimum
        self.exclusive = exclusive
        self.maximum = maximum
        self.max_exclusive = max_exclusive
        self.unit = unit  # for the unit-trap warning (geometry.traps.milli_prefix)

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> float:
        try:
            x = parse_spice_number(value)
        except ValueError as exc:
            self.fail(str(exc), param, ctx)
        if self.minimum is not None and (x <= self.minimum if self.exclusive else x < self.minimum):
            rel = ">" if self.exclusive else ">="
            self.fail(f"{value!r} must be {rel} {self.minimum:g}", param, ctx)
        if self.maximum is not None and (x >= self.maximum if self.max_exclusive
                                         else x > self.maximum):
            rel = "<" if self.max_exclusive else "<="
            self.fail(f"{value!r} must be {rel} {self.maximum:g}", param, ctx)
        if isinstance(value, str):
            from geometry.traps import milli_prefix

            trap = milli_prefix(value, self.unit)
            if trap is not None:  # a warning only: the value keeps its SPICE meaning
                name = param.opts[0] if param is not None and param.opts else "option"
                click.echo(f"warning: {name}: {trap}", err=True)
        return x


netlist_arg = click.argument("netlist", type=click.Path(dir_okay=False, allow_dash=True))
routes_arg = click.argument("routes", type=click.Path(dir_okay=False))
frequency_opt = click.option(
    "--frequency", type=SpiceNumber(minimum=FREQUENCY_RANGE_HZ[0], exclusive=False,
                                    maximum=FREQUENCY_RANGE_HZ[1], unit="Hz"), default=None,
    help="Resistance at this frequency in Hz (skin effect estimate), 1e-6 to 1e12; default DC. "
         "Accepts 100meg.",
)
min_coupling_opt = click.option(
    "--min-coupling", type=SpiceNumber(minimum=0.0, exclusive=False, maximum=1.0,
                                       max_exclusive=True), default=None,
    help="Write coupling statements only for |k| at or above this (0: every coupling). Default: "
         "chosen per board, the largest threshold that keeps every [[loop]] within 1% of the full "
         "matrix (0.01 for a board without loops).",
)
broadband_opt = click.option(
    "--broadband", is_flag=True,
    help="Write every branch as an R-L ladder fitted to its R(f) and L(f) over --band "
         "(skin and proximity effect) instead of one R and L.",
)
band_opt = click.option(
    "--band", default=None, metavar="FMIN,FMAX",
    help="The broadband ladders' band in Hz (implies --broadband); default 1k,1g.",
)


def parse_band(value: str | None) -> tuple[float, float] | None:
    """``FMIN,FMAX`` (SPICE-style numbers, Hz) -> (fmin, fmax); click error when invalid."""
    if value is None:
        return None
    parts = value.split(",")
    try:
        lo, hi = (parse_spice_number(p.strip()) for p in parts) if len(parts) == 2 else (0.0, 0.0)
    except ValueError as exc:
        raise click.BadParameter(str(exc), param_hint="--band") from exc
    if not 0 < lo < hi:
        raise click.BadParameter(f"{value!r}: give FMIN,FMAX with 0 < FMIN < FMAX (Hz)",
                                 param_hint="--band")
    return lo, hi


scheduler_opt = click.option(
    "--scheduler", default=None, metavar="ADDRESS",
    help="Run the independent solves on the Dask scheduler at ADDRESS (tcp://HOST:8786) instead "
         "of in this process (for now the reduced model's check of the full copper, one dense "
         "solve per frequency; check's loops stay in process); overrides $PARASITE_SCHEDULER "
         "('' : in process). Same output either way.",
)
quiet_opt = click.option("--quiet", "-q", is_flag=True, help="No progress on standard error.")
strict_opt = click.option(
    "--strict", is_flag=True,
    help="Treat every warning (unit traps, dangling vias, islands...) as an error: print them, "
         "write nothing, exit 1. For makefiles.",
)


def echo_warnings(warnings: list[str], strict: bool, prefix: str = "") -> None:
    """Print ``warnings`` on standard error; with ``strict``, as errors, then exit 1
    (call it before anything is written)."""
    import sys

    for w in warnings:
        text = w if ": warning: " in w else f"{prefix}warning: {w}"
        click.echo(text.replace(": warning: ", ": error: ", 1) if strict else text, err=True)
    if strict and warnings:
        click.echo(f"error: {len(warnings)} warning(s) and --strict: nothing written", err=True)
        sys.exit(1)


def progress_callback(quiet: bool) -> Any:
    """A progress callback for the extraction (None when quiet or unavailable)."""
    if quiet:
        return None
    try:
        from parasite.progress import make_progress
    except ImportError:
        return None
    return make_progress()


inductance_opt = click.option(
    "--inductance", type=click.Choice(["auto", "dense", "fast"]), default="auto",
    show_default=True,
    help="How the partial inductance is held: dense (the N x N matrix, the reference), fast "
         "(exact near field + fast far field, memory linear in N; loops by iterative "
         "solves; augment writes the copper as a reduced model only) or auto (dense when the "
         "board has at most 10,000 pieces and the dense estimate fits in memory, else "
         "fast). See docs/scale.md.")


def loop_progress(quiet: bool) -> Any:
    """A progress callback for the fast path's loop solves (None when quiet or unavailable)."""
    if quiet:
        return None
    from parasite.progress import progress_reporter

    return progress_reporter(False, label="loops solved")


def near_progress(quiet: bool) -> Any:
    """A progress callback for the fast path's exact near field (segments whose rows
    are done)."""
    if quiet:
        return None
    from parasite.progress import progress_reporter

    return progress_reporter(False, label="near-field rows")
