"""``parasite plot``: the board from above, shaded by a loop's terms or by
partial inductance, and (``--couplings``) the coupling matrix. Needs
matplotlib (``pip install 'parasite[plot]'``); no display is needed."""

from __future__ import annotations

import click

from geometry.limits import MAX_LENGTH_M
from parasite.cli import reports_input_errors
from parasite.cli.options import SpiceNumber, netlist_arg, progress_callback, quiet_opt, routes_arg


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
@click.option("--field", "field_loop", default=None, metavar="LOOP",
              help="Instead: a heat map of this loop's magnetic near field |B| (per 1 A) on a "
                   "plane at --height over the copper.")
@click.option("--height", type=SpiceNumber(minimum=0.0, maximum=MAX_LENGTH_M), default=None,
              help="With --field: the plane's distance from the copper in metres (5m = 5 mm).")
@click.option("--below", is_flag=True, help="With --field: the plane under the board.")
@quiet_opt
@reports_input_errors
def plot(netlist: str, routes: str, output: str, loop_name: str | None, couplings: bool,
         field_loop: str | None, height: float | None, below: bool, quiet: bool) -> None:
    """Draw the copper of NETLIST + ROUTES from above into a PNG or SVG file
    (or, with --field, a loop's near-field map: an estimate, not a measurement)."""
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
    if field_loop is not None and (loop_name is not None or couplings):
        raise click.BadParameter("--field draws a picture of its own: leave out --loop and "
                                 "--couplings", param_hint="'--field'")
    if (field_loop is None) != (height is None):
        raise click.BadParameter("--field LOOP and --height H go together",
                                 param_hint="'--field' / '--height'")
    inputs = load_inputs(netlist, routes)
    names = [spec.name for spec in inputs.routes.loops]
    if field_loop is not None:
        field_loop = _loop_name(routes, names, field_loop, "'--field'")
    if loop_name is not None:
        loop_name = _loop_name(routes, names, loop_name, "'--loop'")
    extraction = extract(inputs, progress=progress_callback(quiet))
    if field_loop is not None and height is not None:
        from parasite.plot_field import field_plot_bytes

        results = loop_results(inputs.graph, inputs.netlist, extraction.L, extraction.R)
        chosen_field = next(r for r in results if r.name == field_loop)
        write_output(output, field_plot_bytes(inputs.graph, chosen_field, height, fmt, below=below),
                     input_files(netlist, routes, inputs.netlist))
        return
    chosen = None
    if loop_name is not None:
        results = loop_results(inputs.graph, inputs.netlist, extraction.L, extraction.R)
        chosen = next(r for r in results if r.name == loop_name)
    data = plot_bytes(inputs.graph, extraction.L, fmt, loop=chosen, couplings=couplings)
    write_output(output, data, input_files(netlist, routes, inputs.netlist))


def _loop_name(routes: str, names: list[str], name: str, hint: str) -> str:
    """The loop's name as written in ROUTES (case folded when unambiguous)."""
    if name in names:
        return name
    folded = [n for n in names if n.casefold() == name.casefold()]
    if len(folded) != 1:
        known = ", ".join(repr(n) for n in names) if names else "none"
        raise click.BadParameter(f"{routes} has no loop named {name!r}; its loops: {known}",
                                 param_hint=hint)
    return folded[0]
