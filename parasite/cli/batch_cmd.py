"""``parasite batch``: the JSON reports of many boards in one run.

Arguments are pairs ``NETLIST ROUTES``; each board's report is written to
``DIR/NAME.json`` (NAME: the routes file's name without its extension and without a
final ``.routes``: ``board.routes.toml`` -> ``board.json``), the same bytes as
``parasite report NETLIST ROUTES --format json`` prints for it. Every board's inputs
are read and checked before any work, and the reports are written together at the end
(:mod:`parasite.outputs`): a bad file anywhere, or an error during any board's
extraction, is exit 1 with nothing written. Standard output: one line per board
(output, segments, loops, loops and mutual limits over their limit). Boards run one
after the other in this process, or one per task on a Dask cluster
(:func:`parasite.batch.report_boards`).
"""

from __future__ import annotations

import sys
import time
from pathlib import Path
from typing import Any

import click

from parasite.cli import EXIT_OVER_LIMIT, reports_input_errors
from parasite.cli.options import inductance_opt, quiet_opt


def report_name(routes: str) -> str:
    """``DIR``-relative name of a board's report: the routes file's name without
    its extension and a final ``.routes``, plus ``.json`` (a report named
    ``board.routes.json`` would read as a routes file in JSON)."""
    stem = Path(routes).stem
    if stem.endswith(".routes") and len(stem) > len(".routes"):
        stem = stem[: -len(".routes")]
    return stem + ".json"


def _boards(files: tuple[str, ...]) -> list[tuple[str, str]]:
    """The ``(netlist, routes)`` pairs of the arguments; click usage errors for an
    odd count and for standard input."""
    if len(files) % 2:
        raise click.UsageError(
            f"the arguments are pairs NETLIST ROUTES; got {len(files)} file"
            f"{'' if len(files) == 1 else 's'}, an odd count "
            f"(the last, {files[-1]!r}, has no partner)")
    if "-" in files:
        raise click.UsageError("a batch reads every netlist from a file; '-' (standard input) "
                               "is not accepted")
    return [(files[k], files[k + 1]) for k in range(0, len(files), 2)]


def _outputs(boards: list[tuple[str, str]], folder: str) -> list[str]:
    """The report file of every board in ``folder``; usage errors for a file at
    ``folder`` and for two boards with the same report name."""
    where = Path(folder)
    if not folder.strip() or folder == "-":
        raise click.UsageError(f"-o {folder!r}: give a folder for the reports (one file per "
                               f"board; none goes to standard output)")
    if where.exists() and not where.is_dir():
        raise click.UsageError(f"-o {folder!r} is a file; give a folder for the reports")
    seen: dict[str, str] = {}
    out = []
    for _, routes in boards:
        name = report_name(routes)
        if name in seen:
            raise click.UsageError(
                f"{seen[name]!r} and {routes!r} would both be reported to "
                f"{str(where / name)!r}; rename one of the routes files or run two batches")
        seen[name] = routes
        out.append(str(where / name))
    return out


@click.command()
@click.argument("files", nargs=-1, required=True, type=click.Path(dir_okay=False),
                metavar="NETLIST ROUTES [NETLIST ROUTES ...]")
@click.option("-o", "--output-dir", "output_dir", required=True, metavar="DIR",
              help="The folder of the reports (created if missing): DIR/NAME.json per board, "
                   "NAME the routes file's name without its extension and a final .routes.")
@inductance_opt
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Report the boards on the Dask scheduler at ADDRESS (tcp://HOST:8786), one "
                   "board per task, instead of one after the other in this process; overrides "
                   "$PARASITE_SCHEDULER ('' : in process). Every worker needs parasite and read "
                   "access to the files. Same reports either way.")
@click.option("--check", "check_limits", is_flag=True,
              help="After writing the reports, exit 3 when a loop (or a loop pair's mutual) of "
                   "any board is over its limit, naming each on standard error, as check does.")
@quiet_opt
@reports_input_errors
def batch(files: tuple[str, ...], output_dir: str, inductance: str, scheduler: str | None,
          check_limits: bool, quiet: bool) -> None:
    """Write the JSON report of every board NETLIST ROUTES into DIR, the same bytes as
    'report --format json' of each; print one line per board.

    Every board's files are checked before any work; an error in any board
    writes nothing. The inductances are estimates from closed-form formulas:
    leave a margin and confirm by measurement.
    """
    from parasite.batch import board_report, report_boards
    from parasite.outputs import check_outputs, input_files, write_outputs
    from parasite.pipeline import load_inputs
    from parasite.schedule import connected, runs_here, scheduler_address

    boards = _boards(files)
    outputs = _outputs(boards, output_dir)
    client = click.get_current_context().with_resource(connected(scheduler))  # before any work
    protected: list[str | Path] = []
    loop_lines: list[dict[str, str]] = []  # per board: loop name -> where it is written
    for netlist, routes in boards:  # every board's files read and checked first
        inputs = load_inputs(netlist, routes, inductance)
        protected += input_files(netlist, routes, inputs.netlist)
        loop_lines.append({spec.name: f"{routes}:{spec.line}" if spec.line is not None
                           else f"{routes}: loop[{spec.index}]" for spec in inputs.routes.loops})
    if Path(output_dir).is_dir():  # else no output can be an existing input
        check_outputs(outputs, protected)
    total = len(boards)
    if not quiet:
        where = "in this process" if client is None else f"on {scheduler_address(scheduler)}"
        click.echo(f"batch: {total} board(s) checked; reporting {where}", err=True)
    started = time.monotonic()
    done = 0

    def board_done(index: int) -> None:
        nonlocal done
        done += 1
        if not quiet:
            click.echo(f"batch: {boards[index][1]}: reported ({done} of {total} after "
                       f"{time.monotonic() - started:.1f} s)", err=True)

    if runs_here():  # as 'report' runs: the numerical libraries on all their threads
        reports = []
        for k, (netlist, routes) in enumerate(boards):
            reports.append(board_report((netlist, routes, inductance)))
            board_done(k)
    else:  # one board per task, one BLAS thread each (parasite.batch)
        reports = report_boards(boards, inductance=inductance, board_done=board_done)
    _write(output_dir, list(zip(outputs, reports, strict=True)), protected, write_outputs)
    parsed = [_summary(r) for r in reports]
    for (_, routes), rep in zip(boards, parsed, strict=True):
        for w in rep["warnings"]:
            click.echo(_board_warning(routes, w), err=True)
    click.echo(format_table(outputs, parsed), nl=False)
    if check_limits:
        over = [line for (_, routes), rep, lines in zip(boards, parsed, loop_lines, strict=True)
                for line in over_limit_lines(routes, rep, lines)]
        for line in over:
            click.echo(line, err=True)
        if over:
            sys.exit(EXIT_OVER_LIMIT)


def _write(folder: str, items: list[tuple[str, bytes]], protected: list[str | Path],
           write_outputs: Any) -> None:
    """Create ``folder`` if missing (removed again if the writing fails) and write
    every report atomically."""
    from parasite.errors import OutputError

    where = Path(folder)
    created = not where.exists()
    try:
        where.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot create the folder: {exc.strerror or exc}", file=folder) from None
    try:
        write_outputs(items, protected)
    except BaseException:
        if created:
            try:
                where.rmdir()
            except OSError:
                pass
        raise


def _summary(report: bytes) -> dict[str, Any]:
    """What the table and --check need of one board's JSON report."""
    import json

    doc = json.loads(report)
    return {"summary": doc["summary"], "loops": doc["loops"],
            "mutual_limits": doc.get("mutual_limits", []), "warnings": doc["warnings"]}


def _board_warning(routes: str, warning: str) -> str:
    """A board's warning on standard error, prefixed with its routes file."""
    if warning.startswith(f"{routes}:"):
        return warning
    if ": warning: " in warning:
        return f"{routes}: {warning}"
    return f"{routes}: warning: {warning}"


def format_table(outputs: list[str], reports: list[dict[str, Any]]) -> str:
    """One line per board: output, segments, loops, loops over their limit, mutual
    limits exceeded (from each report's summary)."""
    head = ("output", "segments", "loops", "over limit", "mutual over limit")
    rows = [(out, str(r["summary"]["segments"]), str(len(r["loops"])),
             str(r["summary"].get("loops_over_limit", 0)),
             str(r["summary"].get("mutual_over_limit", 0)))
            for out, r in zip(outputs, reports, strict=True)]
    width = [max(len(row[k]) for row in [head, *rows]) for k in range(len(head))]
    lines = []
    for row in [head, *rows]:
        cells = [row[0].ljust(width[0])] + [c.rjust(w) for c, w in zip(row[1:], width[1:],
                                                                       strict=True)]
        lines.append("  ".join(cells).rstrip())
    return "\n".join(lines) + "\n"


def over_limit_lines(routes: str, report: dict[str, Any],
                     loop_lines: dict[str, str]) -> list[str]:
    """``ROUTES:LINE: loop 'NAME' is over its limit: VALUE > LIMIT`` for every loop
    over its limit, and the same for every mutual limit exceeded (as ``check``)."""
    from parasite.cli.check_cmd import value_and_limit

    out = []
    for loop in report["loops"]:
        if loop.get("within_limit") is False:
            value, limit = value_and_limit(loop["inductance"], loop["limit"])
            where = loop_lines.get(loop["name"], routes)
            out.append(f"{where}: loop {loop['name']!r} is over its limit: {value} > {limit}")
    for e in report["mutual_limits"]:
        if not e["within_limit"]:
            value, limit = value_and_limit(abs(e["mutual"]), e["limit"])
            where = f"{routes}:{e['line']}" if e["line"] is not None else f"{routes}: {e['key']}"
            out.append(f"{where}: mutual of loops {e['loop']!r} and {e['other']!r} is over its "
                       f"limit: {value} > {limit}")
    return out
