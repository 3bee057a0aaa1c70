"""Strict access to the fields of a board file's lists: a missing or malformed
field the importer uses is a :class:`BoardError` naming the file and line;
fields it does not use are never looked at (tolerant of new tokens)."""

from __future__ import annotations

import math

from geometry.kicad.errors import BoardError
from geometry.kicad.sexpr import Expr

MM = 1e-3  # m per mm; every length in a board file is in mm (KiCad's sexpr-intro)


class Fields:
    """Reads fields of lists of one board file (``file`` names it in messages)."""

    def __init__(self, file: str) -> None:
        self.file = file

    def fail(self, expr: Expr, message: str) -> BoardError:
        return BoardError(f"({expr.head} ...): {message}", file=self.file, line=expr.line)

    def child(self, expr: Expr, head: str) -> Expr:
        found = expr.first(head)
        if found is None:
            raise self.fail(expr, f"missing ({head} ...)")
        return found

    def number(self, expr: Expr, index: int = 0, what: str | None = None) -> float:
        atoms = expr.atoms()
        if index >= len(atoms):
            raise self.fail(expr, f"expected {what or 'a number'} at position {index + 1}")
        text = atoms[index]
        try:
            value = float(text)
        except ValueError:
            raise self.fail(expr, f"{text!r} is not a number ({what or 'value'})") from None
        if not math.isfinite(value):
            raise self.fail(expr, f"{text!r} is not a finite number")
        return value

    def length(self, expr: Expr, head: str, *, positive: bool = False) -> float:
        """``(head N)`` as metres."""
        sub = self.child(expr, head)
        value = self.number(sub, 0, f"{head} in mm") * MM
        if positive and value <= 0:
            raise self.fail(sub, f"{head} must be > 0 (got {value / MM:g} mm)")
        return value

    def point(self, expr: Expr, head: str) -> tuple[float, float]:
        """``(head X Y ...)`` as metres (KiCad's frame: y down)."""
        sub = self.child(expr, head)
        return (self.number(sub, 0, "x in mm") * MM, self.number(sub, 1, "y in mm") * MM)

    def angle(self, expr: Expr, head: str = "at") -> float:
        """The optional third atom of ``(at X Y [ANGLE])``, degrees."""
        sub = self.child(expr, head)
        return self.number(sub, 2, "angle in degrees") if len(sub.atoms()) > 2 else 0.0

    def string(self, expr: Expr, head: str, index: int = 0) -> str:
        sub = self.child(expr, head)
        atoms = sub.atoms()
        if index >= len(atoms):
            raise self.fail(sub, "expected a name")
        return str(atoms[index])

    def net(self, expr: Expr, names: dict[int, str]) -> str:
        """The net of an item: ``(net N)`` (KiCad 6-9, looked up in the board's
        net table), ``(net N "name")`` (pads), or ``(net "name")`` (named only).
        No net field: the unconnected net ``""``."""
        sub = expr.first("net")
        if sub is None:
            return ""
        atoms = sub.atoms()
        if not atoms:
            raise self.fail(sub, "expected a net number or name")
        name = [a for a in atoms[1:] if isinstance(a, str)]
        first = atoms[0]
        if type(first) is str:  # bare word: a net number
            try:
                number = int(first)
            except ValueError:
                raise self.fail(sub, f"{first!r} is not a net number") from None
            if len(atoms) > 1:
                return str(name[0])
            if number not in names:
                raise self.fail(sub, f"net {number} is not in the board's net table")
            return names[number]
        return str(first)  # quoted: the name itself
