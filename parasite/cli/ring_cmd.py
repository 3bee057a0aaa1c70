"""``parasite ring``: simulated against measured ringing at a node."""

from __future__ import annotations

import sys
from typing import Any

import click

from parasite.cli import reports_input_errors
from parasite.cli.options import (
    SpiceNumber,
    frequency_opt,
    min_coupling_opt,
    quiet_opt,
    scheduler_opt,
)


@click.command()
@click.argument("netlist", type=click.Path(dir_okay=False))
@click.argument("routes", type=click.Path(dir_okay=False))
@click.option("--node", required=True,
              help="The node whose edges ring (e.g. sw), or one terminal of an element, "
                   "ELEMENT:TERMINAL (e.g. X2:d), to read that pin's end of the copper.")
@click.option("--measured", "measured", type=click.Path(dir_okay=False), default=None,
              help="A measured waveform of the node: an oscilloscope export (CSV and the like).")
@click.option("--time-unit", "time_unit", type=click.Choice(["s", "ms", "us", "ns", "ps"]),
              default=None, help="Unit of the measured file's time column, when the file "
              "does not say it (e.g. a column named just 'time').")
@click.option("--channel", default=None,
              help="The channel of the measured file to use, by name or number (default: first).")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), default=None,
              help="Write a picture (.png or .svg) of the waveforms around each edge.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              show_default=True, help="How the metrics are printed.")
@click.option("-o", "--output", default="-", show_default=True,
              help="Where the metrics go: a file, or - for standard output.")
@click.option("--band", type=SpiceNumber(minimum=0.0, maximum=1.0, max_exclusive=True),
              default=0.05, show_default=True,
              help="Settling band, as a fraction of each edge's step.")
@click.option("--capacitance", type=SpiceNumber(minimum=0.0), default=None,
              help="Capacitance that rings with the loop, in F (e.g. 350p); default: from the "
                   "device models of the switches on the node, at the voltage they block.")
@click.option("--loop", "loop_name", default=None,
              help="The routes file's loop to compare the fitted inductance with (default: "
                   "its first loop).")
@click.option("--probe", "probe", default=None,
              help="A [[probe]] of the routes file: its reading (the voltage across the "
                   "instrument's input at the end of its leads) is the simulated waveform, "
                   "instead of the voltage at NODE.")
@click.option("--edge", "edge_rule", default="order", show_default=True,
              help="Which simulated edge each measured edge is compared with: 'order' (the "
                   "first measured rising edge with the first simulated rising edge, and so "
                   "on), 'last' (the last simulated edge of the same direction), or a number N "
                   "(the first measured edge with simulated edge N, then in order).")
@click.option("--all-edges", is_flag=True, help="Print every simulated edge, not the last of "
              "each direction.")
@click.option("--timeout", type=SpiceNumber(minimum=1.0, exclusive=False, maximum=1e6),
              default=600.0, show_default=True,
              help="Stop a simulation after this many seconds.")
@min_coupling_opt
@frequency_opt
@click.option("--broadband", is_flag=True,
              help="Copper as broadband R-L ladders (skin and proximity effect over 1 kHz-1 GHz), "
                   "as in 'parasite augment --broadband'.")
@scheduler_opt
@quiet_opt
@reports_input_errors
def ring(netlist: str, routes: str, node: str, measured: str | None, time_unit: str | None,
         channel: str | None,
         plot_path: str | None, fmt: str, output: str, band: float, capacitance: float | None,
         loop_name: str | None, probe: str | None, edge_rule: str, all_edges: bool,
         timeout: float,
         min_coupling: float | None, frequency: float | None, broadband: bool,
         scheduler: str | None, quiet: bool) -> None:
    """Ringing at NODE: simulate NETLIST as written and with the copper of ROUTES,
    measure each switching edge (ring frequency and damping ratio from a damped
    sinusoid fitted after the first lobe, peak overshoot, settling time into a
    band around the final level; docs/ring.md defines each), and compare with a
    measured waveform. From the measured ring, the series loop inductance and
    resistance that would produce it, given the capacitance that rings with it.

    CAUTION: probing a live power stage is hazardous (high voltage, stored
    energy, large currents). Follow local codes and licensed practice. The
    numbers are estimates, to be confirmed by measurement.
    """
    from parasite.outputs import check_output_path, check_outputs, write_outputs
    from parasite.ring.analyse import analyse_ring
    from parasite.ring.report import format_ring_text, ring_json
    from parasite.schedule import connected

    rule: str | int = edge_rule.strip().lower()
    if rule not in ("order", "last"):
        if not str(rule).isdecimal() or int(rule) < 1:
            raise click.BadParameter(f"{edge_rule!r}: give 'order', 'last' or an edge number "
                                     "(1, 2, ...)", param_hint="--edge")
        rule = int(rule)
    if broadband and frequency is not None:
        raise click.UsageError("--broadband starts from the DC resistance: give no --frequency with it")
    inputs = [netlist, routes, measured]
    check_output_path(output, inputs)
    if plot_path is not None:
        from parasite.plot import plot_format

        try:
            picture = plot_format(plot_path)
        except ValueError as exc:
            raise click.BadParameter(str(exc), param_hint="--plot") from None
    check_outputs([plot_path, output] if plot_path is not None else [output], inputs)
    click.get_current_context().with_resource(connected(scheduler))  # before any work
    progress = None if quiet else _progress(tran_of(netlist))
    try:
        result = analyse_ring(
            netlist, routes, node, measured_path=measured, time_unit=time_unit,
            channel=channel, band=band,
            capacitance=capacitance, loop=loop_name, min_coupling=min_coupling,
            frequency=frequency, timeout=timeout, progress=progress, probe=probe,
            edge_rule=rule, broadband=broadband,
        )
    finally:
        if progress is not None:
            progress.close()
    for w in result.report["warnings"]:
        click.echo(f"warning: {w}", err=True)
    for key, sim in result.report["simulations"].items():
        for w in sim.get("warnings", []):
            click.echo(f"{netlist}: ngspice ({key}): {w}", err=True)
    items = []
    if plot_path is not None:
        from parasite.ring.plot import ring_figure

        items.append((plot_path, ring_figure(result, fmt=picture)))
    if fmt == "json":
        text = ring_json(result.report)
    else:
        text = format_ring_text(result.report, all_edges=all_edges)
    items.append((output, text.encode()))
    if netlist != "-":  # the files the netlist includes are inputs too
        from parasite.netlist import read_netlist

        inputs += [str(f) for f in read_netlist(netlist).included_files]
    write_outputs(items, inputs)


def tran_of(netlist: str) -> float | None:
    from parasite.ring.analyse import tran_stop

    try:
        with open(netlist, "rb") as fh:
            return tran_stop(fh.read())
    except OSError:
        return None


class _progress:
    """Simulated time against the ``.tran`` stop time, on standard error when it
    is a terminal and the run takes more than a second."""

    def __init__(self, stop: float | None) -> None:
        from parasite.progress import progress_reporter

        self.stop = stop
        self.line: Any = progress_reporter(False, sys.stderr, label="simulated ns")
        self.stage = ""

    def __call__(self, stage: str, t: float) -> None:
        if self.line is None:
            return
        if stage != self.stage:
            self.line.close()
            self.line.label = f"{stage}: simulated ns"
            self.stage = stage
        total = int(round(self.stop * 1e9)) if self.stop else 0
        self.line(int(t * 1e9), total)

    def close(self) -> None:
        if self.line is not None:
            self.line.close()
