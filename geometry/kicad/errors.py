"""The error of a board file that cannot be imported."""

from geometry.errors import RoutesError


class BoardError(RoutesError):
    """A KiCad board file is malformed, of a version we do not read, or
    contradicts the netlist (a pad's net against its terminal's node)."""
