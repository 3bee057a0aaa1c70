"""A :class:`~geometry.kicad.convert.Draft` as the text of a routes file
(docs/routes-file.md), in mm, for a person to read and edit."""

from __future__ import annotations

import json

from geometry.kicad.board import Board
from geometry.kicad.convert import Draft, Point

MM = 1e-3


def _mm(value: float) -> str:
    text = f"{value / MM:.6f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _pt(p: Point) -> str:
    return f"[{_mm(p[0])}, {_mm(p[1])}]"


def _s(text: str) -> str:
    return json.dumps(text, ensure_ascii=False)  # a TOML basic string is a JSON string


def routes_text(draft: Draft, board: Board, source: str, netlist: str | None) -> str:
    """The routes file (TOML) for ``draft``, with a header saying where it came
    from, the net mapping and what was left out."""
    out: list[str] = [
        f"# Imported from the KiCad board {source} (format version {board.version})",
        f"# by parasite import{' with the netlist ' + netlist if netlist else ' without a netlist'}.",
        "# Stack-up: " + ("from the board's (setup (stackup ...))." if board.stackup_given else
                          "none in the board; the default (1.6 mm, 35 um copper, even dielectric)."),
        "# Frame: x right, y up (KiCad's y turned), from the board's auxiliary axis origin.",
        "# Numbers computed from this copper are estimates; confirm them by measurement.",
        "#",
        "# Board net -> node:",
    ]
    for net, node in sorted(draft.net_names.items()):
        out.append(f"#   {net!r} -> {node}")
    if draft.notes:
        out.append("#")
        out.append("# Notes:")
        out += [f"#   {n}" for n in draft.notes]
    out += ["", 'format = "parasite-routes/1"', 'units = "mm"', ""]
    for name, z, t, plane in draft.layers:
        out.append(f"[layers.{name}]")
        out.append(f"z = {_mm(z)}")
        out.append(f"thickness = {_mm(t)}")
        if plane is not None:
            out.append(f"plane = {_s(plane)}")
        out.append("")
    for tr in draft.traces:
        pts = ", ".join(_pt(p) for p in tr.points)
        out.append("[[trace]]")
        out.append(f"name = {_s(tr.name)}")
        out.append(f"net = {_s(tr.net)}")
        out.append(f"layer = {_s(tr.layer)}")
        out.append(f"width = {_mm(tr.width)}")
        out.append(f"points = [{pts}]")
        out.append("")
    for v in draft.vias:
        out.append(f"[[via]]  # {v.name}")
        out.append(f"net = {_s(v.net)}")
        out.append(f"at = {_pt(v.at)}")
        out.append(f"from = {_s(v.from_layer)}")
        out.append(f"to = {_s(v.to_layer)}")
        out.append(f"diameter = {_mm(v.diameter)}")
        if v.wall is not None:
            out.append(f"wall = {_mm(v.wall)}")
        out.append("")
    for pr in draft.pours:
        out.append(f"[[pour]]  # {pr.name}")
        out.append(f"net = {_s(pr.net)}")
        out.append(f"layer = {_s(pr.layer)}")
        out.append("outline = [" + ", ".join(_pt(p) for p in pr.outline) + "]")
        if pr.holes:
            out.append("holes = [" + ", ".join("[" + ", ".join(_pt(p) for p in h) + "]"
                                               for h in pr.holes) + "]")
        out.append("")
    for p in draft.pins:
        out.append("[[pin]]")
        out.append(f"terminal = {_s(p.terminal)}")
        out.append(f"at = {_pt(p.at)}")
        out.append(f"layer = {_s(p.layer)}")
        out.append("")
    for name, path, extra in draft.loops:
        out.append("[[loop]]")
        out.append(f"name = {_s(name)}")
        out.append("path = [" + ", ".join(_s(t) for t in path) + "]")
        for key in ("limit", "frequency"):
            if key in extra:
                out.append(f"{key} = {_s(extra[key])}")
        out.append("")
    return "\n".join(out).rstrip("\n") + "\n"
