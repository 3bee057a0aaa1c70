"""``parasite augment``: the main job."""

from __future__ import annotations

import click

from parasite.cli import reports_input_errors
from parasite.cli.options import (
    band_opt,
    broadband_opt,
    frequency_opt,
    min_coupling_opt,
    netlist_arg,
    parse_band,
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
@broadband_opt
@band_opt
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
            frequency: float | None, broadband: bool, band: str | None, keep_segments: bool,
            model: str,
            report_path: str | None, quiet: bool) -> None:
    """Write NETLIST with the copper of ROUTES wired in: a series R and L for
    every branch of copper, and coupling statements between them.

    The values are estimates from closed-form formulas, to be confirmed by
    measurement.
    """
    from parasite.augment import augment_files
    from parasite.network.ladders import BroadbandOptions
    from parasite.outputs import check_outputs, input_files, write_outputs
    from parasite.report import report_json

    fband = parse_band(band)
    if (broadband or fband) and frequency is not None:
        raise click.UsageError("--broadband starts from the DC resistance: give no --frequency with it")
    if (broadband or fband) and model == "reduced":
        raise click.UsageError("--broadband writes a ladder per branch: give --model full or auto "
                               "with it")
    wide = BroadbandOptions(band=fband) if fband else (BroadbandOptions() if broadband else None)
    outputs = [output] if report_path is None else [report_path, output]
    check_outputs(outputs, [netlist, routes])
    result = augment_files(netlist, routes, min_coupling=min_coupling, frequency=frequency,
                           keep_segments=keep_segments, progress=progress_callback(quiet),
                           broadband=wide, model=model)
    inputs = input_files(netlist, routes, result.network.extraction.inputs.netlist
                         if result.network is not None else None)
    check_outputs(outputs, inputs)  # now also the files the netlist includes
    for w in result.report["warnings"]:
        click.echo(f"{routes}: warning: {w}", err=True)
    items = [(output, result.netlist_bytes)]
    if report_path is not None:
        items.insert(0, (report_path, report_json(result.report).encode()))
    write_outputs(items, inputs)
