"""``parasite check``: loop budgets, for a makefile.

Prints the loop table on standard output, and for the loops over their limit
their largest segment and pair terms. For every loop over its limit, a line
``ROUTES:LINE: loop 'NAME' is over its limit: VALUE > LIMIT`` goes to
standard error and the exit code is 3. A loop's ``mutual`` limits (the
mutual inductance with another named loop, e.g. a gate loop's common-source
inductance against its power loop) are checked the same way: ``|M| <= limit``.
Exit 0 when every loop and pair with a limit is within it, 1 when the input is
in error.
"""

from __future__ import annotations

import sys

import click

from parasite.cli import EXIT_OVER_LIMIT, reports_input_errors
from parasite.cli.options import (
    echo_warnings,
    inductance_opt,
    loop_progress,
    near_progress,
    netlist_arg,
    progress_callback,
    quiet_opt,
    routes_arg,
    scheduler_opt,
    strict_opt,
)


def value_and_limit(value: float, limit: float) -> tuple[str, str]:
    """Value and limit with enough digits to tell them apart."""
    from parasite.units import engineering

    for digits in (4, 8, 15):
        a, b = engineering(value, "H", digits), engineering(limit, "H", digits)
        if a != b:
            break
    return a, b


@click.command()
@netlist_arg
@routes_arg
@inductance_opt
@strict_opt
@scheduler_opt
@quiet_opt
@reports_input_errors
def check(netlist: str, routes: str, inductance: str, strict: bool, scheduler: str | None,
           quiet: bool) -> None:
    """Check every [[loop]] of ROUTES against its limit: exit 3 when one is over.

    Loop inductances are estimates from closed-form formulas; leave a margin
    and confirm by measurement.
    """
    from parasite.loops import format_loop_contributors, format_loop_table, loop_results
    from parasite.outputs import write_output
    from parasite.pipeline import extract, load_inputs
    from parasite.schedule import connected

    click.get_current_context().with_resource(connected(scheduler))  # before any work
    inputs = load_inputs(netlist, routes, inductance)
    echo_warnings(list(inputs.graph.warnings), strict)
    if not inputs.routes.loops:
        click.echo(f"{routes}: warning: no [[loop]] entries, nothing to check", err=True)
        return
    if inputs.inductance == "fast":
        results, limits = _fast_results(inputs, quiet)
    else:
        extraction = extract(inputs, progress=progress_callback(quiet))
        results = loop_results(inputs.graph, inputs.netlist, extraction.L, extraction.R)
        limits = _mutual_limits(inputs.graph, results, extraction.L)
    over = [r for r in results if r.over_limit]
    text = format_loop_table(results)
    if over:  # what to move first
        text += "\n" + format_loop_contributors(over, top=3, graph=inputs.graph)
    if limits:
        from parasite.report import loop_coupling_text

        text += "\n" + "\n".join(loop_coupling_text({"mutual_limits": limits})).lstrip("\n") + "\n"
    write_output("-", text.encode())
    for r in over:
        assert r.limit is not None
        value, limit = value_and_limit(r.inductance, r.limit)
        where = f"{routes}:{r.line}" if r.line is not None else f"{routes}: loop[{r.index}]"
        click.echo(f"{where}: loop {r.name!r} is over its limit: {value} > {limit}", err=True)
    mutual_over = [e for e in limits if not e["within_limit"]]
    for e in mutual_over:
        value, limit = value_and_limit(abs(e["mutual"]), e["limit"])
        where = f"{routes}:{e['line']}" if e["line"] is not None else f"{routes}: {e['key']}"
        click.echo(f"{where}: mutual of loops {e['loop']!r} and {e['other']!r} is over its limit: "
                   f"{value} > {limit}", err=True)
    if over or mutual_over:
        sys.exit(EXIT_OVER_LIMIT)


def _fast_results(inputs: object, quiet: bool) -> tuple[list, list[dict]]:
    """The loops and the mutual limits on the fast path (the inductance operator,
    :mod:`parasite.loops_operator`; pair terms of the exact near field only)."""
    from parasite.errors import ParasiteError
    from parasite.field.loop_report import limit_entries, loop_coupling_matrix_operator
    from parasite.loops_operator import loop_results_operator
    from parasite.pipeline import extract_fast

    try:
        fast = extract_fast(inputs, progress=near_progress(quiet))  # type: ignore[arg-type]
        graph = fast.inputs.graph
        line = loop_progress(quiet)
        results = loop_results_operator(graph, fast.inputs.netlist, fast.op, fast.R,
                                        progress=line,
                                        status=None if line is None else line.status)
        specs = list(graph.routes.loops)
        limits = (limit_entries(specs, results, loop_coupling_matrix_operator(results, fast.op))
                  if any(s.mutual for s in specs) else [])
    except ParasiteError as exc:
        if exc.file is None:
            exc.file = inputs.routes_path  # type: ignore[attr-defined]
        raise
    return results, limits


def _mutual_limits(graph: object, results: list, L: object) -> list[dict]:
    """The ``mutual`` limits of the loops with their values (copper only)."""
    from parasite.field.loop_report import limit_entries, loop_coupling_matrix

    specs = list(graph.routes.loops)  # type: ignore[attr-defined]
    if not any(s.mutual for s in specs):
        return []
    return limit_entries(specs, results, loop_coupling_matrix(results, L))  # type: ignore[arg-type]
