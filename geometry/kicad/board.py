"""The copper of a KiCad board file (KiCad 6 to 9), as frozen dataclasses.

Read from the S-expression board format documented in KiCad's developer
documentation (dev-docs.kicad.org, "File Formats", "Board File Format").
Lengths are metres in KiCad's own frame (x right, y *down*, origin at the
sheet's corner); angles are degrees counter-clockwise as seen from the top
(KiCad's convention). The routes writer turns this frame into the routes
file's (y up).

Stack-up: the copper layers' z come from ``(setup (stackup ...))`` (copper
and dielectric thicknesses, top to bottom); z is measured from the bottom face
of the bottom copper layer (solder mask left out). A board without a stack-up
gets :data:`DEFAULT_BOARD_THICKNESS` from ``(general (thickness ...))`` or
1.6 mm, 35 um copper on every layer, the dielectric divided evenly
(common practice: a 1.6 mm board with 1 oz copper).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

from geometry.kicad.errors import BoardError
from geometry.kicad.fields import MM, Fields
from geometry.kicad.polygons import FillPolygon, arc_length, rebuild_holes
from geometry.kicad.sexpr import Expr, parse_sexpr

Point = tuple[float, float]

FIRST_VERSION = 20210000  # KiCad 6 writes 20211014
LAST_VERSION = 20259999  # KiCad 9 writes 2024-2025 numbers
DEFAULT_BOARD_THICKNESS = 1.6e-3  # m
DEFAULT_COPPER_THICKNESS = 35e-6  # m (1 oz/ft^2)


@dataclass(frozen=True)
class CopperLayer:
    name: str  # KiCad's name, e.g. "F.Cu"
    z: float  # m, bottom face above the bottom face of the bottom copper
    thickness: float  # m


@dataclass(frozen=True)
class Track:
    """A straight track (``segment``) or an arc (``mid`` not None)."""

    start: Point
    end: Point
    mid: Point | None
    width: float
    layer: str
    net: str
    line: int

    @property
    def length(self) -> float:
        if self.mid is None:
            return math.dist(self.start, self.end)
        return arc_length(self.start, self.mid, self.end)


@dataclass(frozen=True)
class BoardVia:
    at: Point
    size: float  # m, diameter of the pads (annular ring)
    drill: float  # m, diameter of the drilled hole
    layers: tuple[str, str]  # its two end layers
    kind: str  # "through", "blind" or "micro"
    net: str
    line: int


@dataclass(frozen=True)
class Pad:
    reference: str  # the footprint's reference designator
    number: str  # the pad number ("" for unnumbered pads)
    at: Point  # m, absolute
    angle: float  # degrees, absolute orientation
    shape: str  # rect, roundrect, oval, circle, trapezoid, custom
    size: tuple[float, float]  # m, in the pad's own frame
    layers: tuple[str, ...]  # copper layers only
    drill: float | None  # m, plated hole diameter (smallest size of an oval hole)
    net: str
    line: int


@dataclass(frozen=True)
class Zone:
    net: str
    layers: tuple[str, ...]
    fills: dict[str, tuple[FillPolygon, ...]]  # layer -> filled islands, holes rebuilt
    line: int


@dataclass(frozen=True)
class Board:
    path: str
    version: int
    layers: tuple[CopperLayer, ...]  # top to bottom
    nets: tuple[str, ...]  # the net table ("" is the unconnected net)
    tracks: tuple[Track, ...]
    vias: tuple[BoardVia, ...]
    pads: tuple[Pad, ...]
    zones: tuple[Zone, ...]
    origin: Point  # m, the auxiliary axis origin (0, 0 when the file has none)
    stackup_given: bool

    def layer(self, name: str) -> CopperLayer:
        return next(la for la in self.layers if la.name == name)


def _copper_order(name: str) -> tuple[int, int]:
    if name == "F.Cu":
        return (0, 0)
    if name == "B.Cu":
        return (2, 0)
    return (1, int(name[2:-3]))


def _read_layers(f: Fields, root: Expr) -> list[str]:
    table = f.child(root, "layers")
    names = []
    for entry in table.items:
        if not isinstance(entry, Expr):
            continue
        atoms = entry.atoms()
        if len(atoms) >= 2 and str(atoms[0]).endswith(".Cu"):
            name = str(atoms[0])
            if name not in ("F.Cu", "B.Cu") and not (name.startswith("In") and name[2:-3].isdecimal()):
                raise f.fail(entry, f"unknown copper layer name {name!r}")
            names.append(name)
    if not names:
        raise f.fail(table, "the board has no copper layer")
    return sorted(names, key=_copper_order)


def _stack(f: Fields, root: Expr, names: list[str]) -> tuple[list[CopperLayer], bool]:
    setup = root.first("setup")
    stackup = setup.first("stackup") if setup is not None else None
    if stackup is None:
        general = root.first("general")
        total = DEFAULT_BOARD_THICKNESS
        if general is not None and general.first("thickness") is not None:
            total = f.length(general, "thickness", positive=True)
        t = DEFAULT_COPPER_THICKNESS
        gap = (total - len(names) * t) / max(1, len(names) - 1)
        if gap <= 0:
            raise BoardError(f"board thickness {total / MM:g} mm leaves no room for {len(names)} "
                             f"copper layers", file=f.file, line=root.line)
        n = len(names)
        return [CopperLayer(nm, (n - 1 - i) * (t + gap), t) for i, nm in enumerate(names)], False
    entries: list[tuple[str, float, Expr]] = []  # (name or "", thickness, expr), top to bottom
    for entry in stackup.lists("layer"):
        atoms = entry.atoms()
        name = str(atoms[0]) if atoms else ""
        kind = f.string(entry, "type") if entry.first("type") is not None else ""
        if name.endswith(".Cu"):
            entries.append((name, f.length(entry, "thickness", positive=True), entry))
        elif kind.lower() in ("core", "prepreg") or name.startswith("dielectric"):
            total = sum(f.number(t, 0, "thickness in mm") for t in entry.lists("thickness")) * MM
            if total <= 0:
                raise f.fail(entry, "a dielectric layer needs a thickness > 0")
            entries.append(("", total, entry))
    cu = [e for e in entries if e[0]]
    if sorted(e[0] for e in cu) != sorted(names):
        raise f.fail(stackup, f"the stack-up's copper layers {[e[0] for e in cu]} differ from the "
                              f"board's {names}")
    out: list[CopperLayer] = []
    z = 0.0
    for name, thickness, _ in reversed(entries):
        if name:
            out.append(CopperLayer(name, z, thickness))
        z += thickness
    out.sort(key=lambda la: _copper_order(la.name))
    return out, True


def _rotate(x: float, y: float, degrees: float) -> Point:
    """Rotate a vector by ``degrees`` counter-clockwise as seen on screen, in
    KiCad's y-down frame."""
    a = math.radians(degrees)
    c, s = math.cos(a), math.sin(a)
    return (x * c + y * s, -x * s + y * c)


def _copper_of(f: Fields, expr: Expr, names: list[str]) -> tuple[str, ...]:
    layers = f.child(expr, "layers")
    out: list[str] = []
    for a in layers.atoms():
        a = str(a)
        if a in ("*.Cu", "F&B.Cu"):
            out.extend(names if a == "*.Cu" else ["F.Cu", "B.Cu"])
        elif a.endswith(".Cu"):
            if a not in names:
                raise f.fail(layers, f"{a!r} is not a copper layer of this board")
            out.append(a)
    return tuple(dict.fromkeys(sorted(out, key=_copper_order)))


def _footprint_pads(f: Fields, fp: Expr, names: list[str], nets: dict[int, str]) -> list[Pad]:
    fx, fy = f.point(fp, "at")
    fa = f.angle(fp)
    ref = ""
    for prop in fp.lists("property"):  # KiCad 8 and later
        atoms = prop.atoms()
        if len(atoms) >= 2 and atoms[0] == "Reference":
            ref = str(atoms[1])
    for text in fp.lists("fp_text"):  # KiCad 6 and 7
        atoms = text.atoms()
        if len(atoms) >= 2 and atoms[0] == "reference":
            ref = str(atoms[1])
    pads = []
    for pad in fp.lists("pad"):
        atoms = pad.atoms()
        if len(atoms) < 3:
            raise f.fail(pad, "expected (pad NUMBER TYPE SHAPE ...)")
        number, kind, shape = str(atoms[0]), str(atoms[1]), str(atoms[2])
        if kind == "np_thru_hole":
            continue
        copper = _copper_of(f, pad, names)
        if not copper:
            continue
        px, py = f.point(pad, "at")
        dx, dy = _rotate(px, py, fa)
        size_expr = f.child(pad, "size")
        size = (f.number(size_expr, 0, "width in mm") * MM, f.number(size_expr, 1, "height in mm") * MM)
        if min(size) <= 0:
            raise f.fail(size_expr, "a pad's size must be > 0")
        drill = None
        if kind == "thru_hole":
            d = f.child(pad, "drill")
            values = [float(v) for v in d.atoms() if v != "oval" and _is_number(v)]
            if not values or min(values) <= 0:
                raise f.fail(d, "a plated hole needs a drill diameter > 0")
            drill = min(values) * MM
        pads.append(Pad(ref, number, (fx + dx, fy + dy), f.angle(pad), shape, size, copper, drill,
                        f.net(pad, nets), pad.line))
    return pads


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _zone(f: Fields, zone: Expr, names: list[str], nets: dict[int, str]) -> Zone:
    if zone.first("layers") is not None:
        layers = _copper_of(f, zone, names)
    else:
        layers = (f.string(zone, "layer"),)
    fills: dict[str, list[FillPolygon]] = {}
    for filled in zone.lists("filled_polygon"):
        layer = f.string(filled, "layer")
        pts = f.child(filled, "pts")
        ring: list[Point] = []
        for xy in pts.items:
            if not isinstance(xy, Expr) or xy.head != "xy":
                raise f.fail(pts, "a filled polygon's points must be (xy X Y)")
            ring.append((f.number(xy, 0, "x in mm") * MM, f.number(xy, 1, "y in mm") * MM))
        if len(ring) >= 3:
            fills.setdefault(layer, []).append(rebuild_holes(ring))
    net = f.net(zone, nets)
    if not net and zone.first("net_name") is not None:
        net = f.string(zone, "net_name")
    return Zone(net, layers, {k: tuple(v) for k, v in fills.items()}, zone.line)


def read_board_text(text: str, file: str) -> Board:
    """Read the copper of a board from the text of a ``.kicad_pcb`` file."""
    root = parse_sexpr(text, file)
    f = Fields(file)
    if root.head != "kicad_pcb":
        raise f.fail(root, "not a KiCad board file (the top-level list is not (kicad_pcb ...))")
    version = int(f.number(f.child(root, "version"), 0, "version"))
    if not FIRST_VERSION <= version <= LAST_VERSION:
        raise BoardError(f"board format version {version} is not one this importer reads "
                         f"({FIRST_VERSION}-{LAST_VERSION}: KiCad 6 to 9); open and save the board "
                         f"in KiCad 6 or later", file=file, line=f.child(root, "version").line)
    names = _read_layers(f, root)
    layers, given = _stack(f, root, names)
    nets: dict[int, str] = {}
    for net in root.lists("net"):
        atoms = net.atoms()
        if len(atoms) >= 2 and type(atoms[0]) is str and atoms[0].lstrip("-").isdecimal():
            nets[int(atoms[0])] = str(atoms[1])
        elif len(atoms) == 1:
            nets[len(nets)] = str(atoms[0])
    tracks: list[Track] = []
    for kind in ("segment", "arc"):
        for t in root.lists(kind):
            layer = f.string(t, "layer")
            if layer not in names:
                raise f.fail(t, f"{layer!r} is not a copper layer of this board")
            mid = f.point(t, "mid") if kind == "arc" else None
            tracks.append(Track(f.point(t, "start"), f.point(t, "end"), mid,
                                f.length(t, "width", positive=True), layer, f.net(t, nets), t.line))
    tracks.sort(key=lambda t: t.line)
    vias = []
    for v in root.lists("via"):
        atoms = v.atoms()
        kind = "blind" if "blind" in atoms else "micro" if "micro" in atoms else "through"
        ends = [str(a) for a in f.child(v, "layers").atoms()]
        if len(ends) != 2 or any(e not in names for e in ends):
            raise f.fail(f.child(v, "layers"), f"a via needs two copper layers of the board, got {ends}")
        a, b = sorted(ends, key=_copper_order)
        vias.append(BoardVia(f.point(v, "at"), f.length(v, "size", positive=True),
                             f.length(v, "drill", positive=True), (a, b), kind, f.net(v, nets), v.line))
    pads = []
    for head in ("footprint", "module"):
        for fp in root.lists(head):
            pads.extend(_footprint_pads(f, fp, names, nets))
    zones = [_zone(f, z, names, nets) for z in root.lists("zone")]
    origin = (0.0, 0.0)
    setup = root.first("setup")
    if setup is not None and setup.first("aux_axis_origin") is not None:
        origin = f.point(setup, "aux_axis_origin")
    return Board(file, version, tuple(layers), tuple(nets.values()), tuple(tracks), tuple(vias),
                 tuple(pads), tuple(zones), origin, given)


def read_board(path: str | Path) -> Board:
    """Read a ``.kicad_pcb`` file; raises :class:`BoardError` with file and line."""
    try:
        data = Path(path).read_bytes()
    except OSError as exc:
        raise BoardError(f"cannot read the file: {exc.strerror or exc}", file=str(path)) from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise BoardError(f"the file is not UTF-8 text (byte {exc.start})", file=str(path),
                         line=data[: exc.start].count(b"\n") + 1) from None
    return read_board_text(text, str(path))
