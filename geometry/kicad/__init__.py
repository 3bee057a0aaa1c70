"""Import the copper of a KiCad board (KiCad 6 to 9) into a routes file.

``read_board`` (board.py) -> :class:`Board`; ``map_nets`` (netmap.py) ->
board net to netlist node; ``convert`` (convert.py) -> :class:`Draft`;
``routes_text`` (writer.py) -> the routes file. :func:`import_board` runs them
in that order.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from geometry.kicad.board import Board, read_board, read_board_text
from geometry.kicad.convert import Draft, Options, convert
from geometry.kicad.errors import BoardError
from geometry.kicad.netmap import ElementInfo, map_nets, read_pin_map
from geometry.kicad.writer import routes_text

__all__ = ["Board", "BoardError", "Draft", "ElementInfo", "Options", "import_board", "read_board",
           "read_board_text", "read_pin_map"]


def import_board(board: Board, elements: Iterable[ElementInfo] | None, options: Options,
                 pin_map: Mapping[str, Mapping[str, str]] | None = None,
                 pin_map_file: str | None = None, source: str = "", netlist_name: str | None = None,
                 ) -> tuple[str, Draft]:
    """The routes file text and the draft of ``board``; ``elements`` None:
    no netlist (nodes named from the board's nets, no pins)."""
    mapping = None
    if elements is not None:
        table = {e.name.lower(): e for e in elements}
        mapping = map_nets(board, table, pin_map or {}, pin_map_file)
    draft = convert(board, mapping, options)
    return routes_text(draft, board, source or board.path, netlist_name), draft
