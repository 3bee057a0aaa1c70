"""``parasite augment``: the main job."""

from __future__ import annotations

import click

from parasite.cli import reports_input_errors
from parasite.cli.options import (
    frequency_opt,
    min_coupling_opt,
    netlist_arg,
    progress_callback,
    quiet_opt,
    routes_arg,
)


@click.command()
@netlist_arg
@routes_arg
@click.option("-o", "--output", default="-", show_default=True,
              help="The augmented netlist: a file, or - for standard output.")
@min_coupling_opt
@frequency_opt
@click.option("--keep-segments", is_flag=True,
              help="One R-L pair per segment instead of one per series chain.")
@click.option("--model", "model", type=click.Choice(["auto", "full", "reduced"]), default="auto",
              show_default=True,
              help="The copper as every branch (full), as a reduced model at the ports "
                   "(reduced), or whichever is smaller when the reduced one is accurate (auto).")
@click.option("--report", "report_path", type=click.Path(dir_okay=False), default=None,
              help="Also write the JSON report of this run to this file.")
@quiet_opt
@reports_input_errors
def augment(netlist: str, routes: str, output: str, min_coupling: float | None,
            frequency: float | None, keep_segments: bool, model: str,
            report_path: str | None, quiet: bool) -> None:
    """Write NETLIST with the copper of ROUTES wired in: a series R and L for
    every branch of copper, and coupling statements between them.

    The values are estimates from closed-form formulas, to be confirmed by
    measurement.
    """
    from parasite.augment import augment_files
    from parasite.outputs import check_output_path, write_output
    from parasite.report import report_json

    inputs = [netlist, routes]
    check_output_path(output, inputs)
    check_output_path(report_path, inputs + [output])
    result = augment_files(netlist, routes, min_coupling=min_coupling, frequency=frequency,
                           keep_segments=keep_segments, progress=progress_callback(quiet),
                           model=model)
    for w in result.report["warnings"]:
        click.echo(f"{routes}: warning: {w}", err=True)
    if report_path is not None:
        write_output(report_path, report_json(result.report).encode(), inputs)
    write_output(output, result.netlist_bytes, inputs)
