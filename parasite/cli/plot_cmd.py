"""``parasite plot``: the board from above, shaded by a loop's terms or by
partial inductance, and (``--couplings``) the coupling matrix. Needs
matplotlib (``pip install 'parasite[plot]'``); no display is needed."""

from __future__ import annotations

import click

from parasite.cli import reports_input_errors
from parasite.cli.options import netlist_arg, progress_callback, quiet_opt, routes_arg


@click.command()
@netlist_arg
@routes_arg
@click.option("-o", "--output", required=True, type=click.Path(dir_okay=False),
              help="The picture: FILE.png or FILE.svg.")
@click.option("--loop", "loop_name", default=None, metavar="NAME",
              help="Shade segments by their term of this loop's inductance "
                   "(default: by partial self inductance).")
@click.option("--couplings", is_flag=True,
              help="Add a heat map of the coupling coefficients, segments ordered by net.")
@quiet_opt
@reports_input_errors
def plot(netlist: str, routes: str, output: str, loop_name: str | None, couplings: bool,
         quiet: bool) -> None:
    """Draw the copper of NETLIST + ROUTES from above into a PNG or SVG file."""
    from parasite.loops import loop_results
    from parasite.outputs import check_output_path, input_files, write_output
    from parasite.pipeline import extract, load_inputs
    from parasite.plot import plot_bytes, plot_format, require_matplotlib

    try:
        fmt = plot_format(output)
    except ValueError as exc:
        raise click.BadParameter(str(exc), param_hint="'-o' / '--output'") from exc
    require_matplotlib()
    check_output_path(output, [netlist, routes])
    inputs = load_inputs(netlist, routes)
    names = [spec.name for spec in inputs.routes.loops]
    if loop_name is not None and loop_name not in names:
        folded = [n for n in names if n.casefold() == loop_name.casefold()]
        if len(folded) != 1:
            known = ", ".join(repr(n) for n in names) if names else "none"
            raise click.BadParameter(
                f"{routes} has no loop named {loop_name!r}; its loops: {known}",
                param_hint="'--loop'",
            )
        loop_name = folded[0]
    extraction = extract(inputs, progress=progress_callback(quiet))
    chosen = None
    if loop_name is not None:
        results = loop_results(inputs.graph, inputs.netlist, extraction.L, extraction.R)
        chosen = next(r for r in results if r.name == loop_name)
    data = plot_bytes(inputs.graph, extraction.L, fmt, loop=chosen, couplings=couplings)
    write_output(output, data, input_files(netlist, routes, inputs.netlist))
