"""``parasite report``: what was extracted."""

from __future__ import annotations

from typing import Any

import click

from parasite.cli import reports_input_errors
from parasite.cli.options import (
    echo_warnings,
    frequency_opt,
    inductance_opt,
    loop_progress,
    min_coupling_opt,
    near_progress,
    netlist_arg,
    progress_callback,
    quiet_opt,
    routes_arg,
    scheduler_opt,
    strict_opt,
)


@click.command()
@netlist_arg
@routes_arg
@click.option("--format", "fmt", type=click.Choice(["text", "json", "csv"]), default="text",
              show_default=True)
@click.option("--table", type=click.Choice(["segments", "couplings", "loops", "loop_pairs",
                                           "mutual_limits", "pickup", "dipoles"]),
              default="segments",
              show_default=True, help="With --format csv: which table.")
@click.option("-o", "--output", default="-", show_default=True, help="A file, or - for standard output.")
@min_coupling_opt
@frequency_opt
@inductance_opt
@strict_opt
@scheduler_opt
@quiet_opt
@reports_input_errors
def report(netlist: str, routes: str, fmt: str, table: str, output: str,
           min_coupling: float | None, frequency: float | None, inductance: str, strict: bool,
           scheduler: str | None, quiet: bool) -> None:
    """Report the segments, couplings, loops and warnings of NETLIST + ROUTES
    (SI units in JSON and CSV)."""
    from parasite.augment import augment_inputs
    from parasite.outputs import check_output_path, input_files, write_output
    from parasite.pipeline import load_inputs
    from parasite.report import format_report
    from parasite.schedule import connected

    check_output_path(output, [netlist, routes])
    click.get_current_context().with_resource(connected(scheduler))  # before any work
    inputs = load_inputs(netlist, routes, inductance)
    if inputs.inductance == "fast":
        from parasite.errors import ParasiteError
        from parasite.pipeline import extract_fast
        from parasite.report_fast import analyse_fast

        try:
            fast = extract_fast(inputs, frequency=frequency, progress=near_progress(quiet))
            line = loop_progress(quiet)
            report_dict = analyse_fast(fast, min_coupling=min_coupling, progress=line,
                                       status=None if line is None else line.status)
        except ParasiteError as exc:
            if exc.file is None:  # the copper is the routes file's: name it
                exc.file = inputs.routes_path
            raise
        used_netlist: Any = inputs.netlist
    else:
        result = augment_inputs(inputs, min_coupling=min_coupling, frequency=frequency,
                                progress=progress_callback(quiet))
        report_dict = result.report
        used_netlist = (result.network.extraction.inputs.netlist
                        if result.network is not None else None)
    if strict:  # the report lists its warnings itself; --strict stops here
        echo_warnings(report_dict["warnings"], strict)
    text = format_report(report_dict, fmt, table)
    write_output(output, text.encode(), input_files(netlist, routes, used_netlist))
