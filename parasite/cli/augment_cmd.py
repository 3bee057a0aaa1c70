"""``parasite augment``: the main job."""

from __future__ import annotations

from typing import TYPE_CHECKING

import click

from parasite.cli import reports_input_errors
from parasite.cli.options import (
    band_opt,
    broadband_opt,
    echo_warnings,
    frequency_opt,
    inductance_opt,
    loop_progress,
    min_coupling_opt,
    near_progress,
    netlist_arg,
    parse_band,
    progress_callback,
    quiet_opt,
    routes_arg,
    scheduler_opt,
    strict_opt,
)

if TYPE_CHECKING:
    from geometry.model import Routes


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
@click.option("--probes", "probes", default=None, metavar="none|NAME,...",
              help="Which [[probe]] entries to attach: 'none', or names separated by commas. "
                   "Default: every probe of ROUTES.")
@inductance_opt
@strict_opt
@scheduler_opt
@quiet_opt
@reports_input_errors
def augment(netlist: str, routes: str, output: str, min_coupling: float | None,
            frequency: float | None, broadband: bool, band: str | None, keep_segments: bool,
            model: str, report_path: str | None, probes: str | None, inductance: str,
            strict: bool, scheduler: str | None, quiet: bool) -> None:
    """Write NETLIST with the copper of ROUTES wired in: a series R and L for
    every branch of copper, and coupling statements between them.

    The values are estimates from closed-form formulas, to be confirmed by
    measurement.
    """
    from geometry.routes import load_routes
    from parasite.network.ladders import BroadbandOptions
    from parasite.outputs import check_outputs, input_files, write_outputs
    from parasite.report import report_json
    from parasite.schedule import connected

    fband = parse_band(band)
    if (broadband or fband) and frequency is not None:
        raise click.UsageError("--broadband starts from the DC resistance: give no --frequency with it")
    wide = BroadbandOptions(band=fband) if fband else (BroadbandOptions() if broadband else None)
    outputs = [output] if report_path is None else [report_path, output]
    check_outputs(outputs, [netlist, routes])
    click.get_current_context().with_resource(connected(scheduler))  # before any work
    if (broadband or fband) and inductance == "fast":
        raise click.UsageError("--broadband fits ladders per branch of the full model, which "
                               "--inductance fast does not write")
    if model == "full" and inductance == "fast":
        raise click.UsageError("--model full needs the dense matrix: not with --inductance fast")
    from parasite.augment import augment_inputs
    from parasite.pipeline import inputs_of, load_inputs, read_netlist_arg

    if probes is None:
        loaded = load_inputs(netlist, routes, inductance)
    else:
        chosen = select_probes(load_routes(routes), probes)
        loaded = inputs_of(read_netlist_arg(netlist), chosen, netlist, routes, inductance)
    fast = loaded.inductance == "fast"
    line = loop_progress(quiet) if fast else None
    result = augment_inputs(loaded, min_coupling=min_coupling, frequency=frequency,
                            keep_segments=keep_segments,
                            progress=near_progress(quiet) if fast else progress_callback(quiet),
                            broadband=wide, model=model,
                            status=None if line is None else line.status, scheduler=scheduler)
    inputs = input_files(netlist, routes, result.network.extraction.inputs.netlist
                         if result.network is not None else None)
    check_outputs(outputs, inputs)  # now also the files the netlist includes
    echo_warnings(result.report["warnings"], strict, f"{routes}: ")
    items = [(output, result.netlist_bytes)]
    if report_path is not None:
        items.insert(0, (report_path, report_json(result.report).encode()))
    write_outputs(items, inputs)


def select_probes(routes: Routes, spec: str) -> Routes:
    """``routes`` with only the probes ``spec`` names: ``none``, or names
    separated by commas (case ignored, as probe names are). An unknown name is
    a usage error that lists the probes of the file."""
    import dataclasses

    if spec.strip().lower() == "none":
        return dataclasses.replace(routes, probes=())
    wanted = [w.strip() for w in spec.split(",") if w.strip()]
    by_name = {p.name.lower(): p for p in routes.probes}
    unknown = [w for w in wanted if w.lower() not in by_name]
    if unknown or not wanted:
        known = ", ".join(repr(p.name) for p in routes.probes) or "none"
        raise click.BadParameter(
            f"{routes.path} has no probe named {', '.join(repr(u) for u in unknown) or repr(spec)}; "
            f"its probes: {known} (or 'none')", param_hint="'--probes'")
    keep = {w.lower() for w in wanted}
    return dataclasses.replace(routes, probes=tuple(p for p in routes.probes if p.name.lower() in keep))
