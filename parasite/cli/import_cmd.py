"""``parasite import``: the copper of a KiCad board as a routes file."""

from __future__ import annotations

import click

from parasite.cli import reports_input_errors
from parasite.cli.options import SpiceNumber


def _nets(value: str | None) -> dict[str, str | None] | None:
    if value is None:
        return None
    out: dict[str, str | None] = {}
    for item in value.split(","):
        item = item.strip()
        if not item:
            continue
        net, _, node = item.partition("=")
        out[net.strip()] = node.strip() or None
    if not out:
        raise click.BadParameter("names no net", param_hint="'--nets'")
    return out


def _area(value: str | None) -> tuple[float, float, float, float] | None:
    if value is None:
        return None
    try:
        x0, y0, x1, y1 = (float(v) * 1e-3 for v in value.split(","))
    except ValueError:
        raise click.BadParameter(f"{value!r}: expected X0,Y0,X1,Y1 in mm", param_hint="'--area'") from None
    return (min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1))


def _loops(values: tuple[str, ...]) -> list[tuple[str, tuple[str, ...], dict[str, str]]]:
    out = []
    for value in values:
        head, *extras = value.split(";")
        name, eq, path = head.partition("=")
        terms = tuple(t.strip() for t in path.split(",") if t.strip())
        fields: dict[str, str] = {}
        for extra in extras:
            key, _, val = extra.partition("=")
            fields[key.strip()] = val.strip()
        if (not eq or not name.strip() or len(terms) < 2 or any(":" not in t for t in terms)
                or any(k not in ("limit", "frequency") or not v for k, v in fields.items())):
            raise click.BadParameter(f"{value!r}: expected NAME=ELEMENT:TERMINAL,...[;limit=L]"
                                     f"[;frequency=F]", param_hint="'--loop'")
        out.append((name.strip(), terms, fields))
    return out


@click.command("import")
@click.argument("board", type=click.Path(dir_okay=False))
@click.option("--netlist", "netlist", type=click.Path(dir_okay=False), default=None,
              help="The SPICE netlist: board nets get the nodes of the terminals their pads are "
                   "(footprint R5 = element R5, U1 = XU1), and matched pads become pins. Without "
                   "it, nodes are named from the board's nets and no pins are written.")
@click.option("--pin-map", "pin_map", type=click.Path(dir_okay=False), default=None,
              help="A TOML file: per reference designator, pad number = terminal name or "
                   "position, for parts whose pad numbers differ from the card's order.")
@click.option("-o", "--output", default="-", show_default=True,
              help="The routes file (*.routes.toml), or - for standard output.")
@click.option("--nets", "nets", default=None, metavar="NET[=NODE],...",
              help="Only these board nets' copper; NET=NODE imports a net no netlist terminal "
                   "names, under NODE.")
@click.option("--area", default=None, metavar="X0,Y0,X1,Y1",
              help="Only copper wholly inside this rectangle (mm, the routes file's frame).")
@click.option("--plane", "planes", multiple=True, metavar="LAYER",
              help="A KiCad layer (e.g. In1.Cu) whose zone fill is a solid return plane; repeatable.")
@click.option("--no-pours", "no_pours", is_flag=True,
              help="Leave zone fills out (listed in the file's notes) instead of writing them as "
                   "[[pour]] entries.")
@click.option("--loop", "loops", multiple=True, metavar="NAME=T1,T2,...[;limit=L][;frequency=F]",
              help="Write a [[loop]] through these terminals (as in the routes file), with an optional "
                   "budget and frequency (SPICE-style values, e.g. ';limit=3n;frequency=100meg'); "
                   "repeatable.")
@click.option("--arc-tolerance", type=SpiceNumber(minimum=1e-6, exclusive=False, maximum=10.0),
              default=5e-3,
              show_default=True, help="Largest distance of an arc's chords from the arc, mm.")
@click.option("--plating", type=SpiceNumber(minimum=0.0, maximum=1.0), default=25e-3,
              show_default=True, help="Plating thickness of via and hole walls, mm.")
@reports_input_errors
def import_board(board: str, netlist: str | None, pin_map: str | None, output: str,
                 nets: str | None, area: str | None, planes: tuple[str, ...], no_pours: bool,
                 loops: tuple[str, ...], arc_tolerance: float, plating: float) -> None:
    """Write the copper of the KiCad board BOARD (KiCad 6 to 9) as a routes file.

    The output is an ordinary routes file: edit it, then give it to augment,
    report, plot, check or ring with the netlist.
    """
    from geometry.kicad import ElementInfo, Options, import_board, read_board, read_pin_map
    from parasite.outputs import check_output_path, write_output

    inputs = [board, netlist, pin_map]
    check_output_path(output, inputs)
    options = Options(nets=_nets(nets), area=_area(area), planes=planes, skip_pours=no_pours,
                      arc_tolerance=arc_tolerance * 1e-3, plating=plating * 1e-3, loops=_loops(loops))
    parsed = read_board(board)
    elements = None
    nl = None
    if netlist is not None:
        from parasite.netlist import read_netlist

        nl = read_netlist(netlist)
        elements = [ElementInfo(e.name, e.nodes, e.terminal_names) for e in nl.elements]
    table = read_pin_map(pin_map) if pin_map else None
    text, draft = import_board(parsed, elements, options, table, pin_map, source=board,
                               netlist_name=netlist)
    _check(text, output, board, nl)
    write_output(output, text.encode(),
                 [*inputs, *(nl.included_files if nl is not None else [])])
    for net, node in sorted(draft.net_names.items()):
        click.echo(f"{board}: board net {net!r} -> node {node}", err=True)
    for note in draft.notes:
        click.echo(f"{board}: note: {note}", err=True)


def _check(text: str, output: str, board: str, netlist: object | None) -> None:
    """Load the text as the commands will: the routes reader, and with a
    netlist the pins and the copper graph. An import that would not load is
    an error here, before anything is written."""
    from geometry.errors import RoutesError
    from geometry.graph import build_graph
    from geometry.routes import parse_routes
    from parasite.pins import resolve_pin_nets

    try:
        routes = parse_routes(text.encode(), output if output != "-" else "<import>", "toml")
        nets = resolve_pin_nets(routes, netlist) if netlist is not None else []  # type: ignore[arg-type]
        if netlist is not None:
            build_graph(routes, nets)
    except RoutesError as exc:
        raise RoutesError(f"the imported copper does not load as a routes file ({exc}); the board "
                          f"may need editing, or import fewer nets with --nets", file=board) from None
