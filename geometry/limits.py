"""The limits of what the inputs may hold: physical ranges of numbers, and
sizes (nesting, points, entries) beyond which an input is refused with a clear
error instead of a traceback, a hang or exhausted memory.

Every limit is far above any real board (common practice, not a standard: a
large board is well under 1 m across, has a few thousand routed pieces and a
few hundred points in its most detailed outline); they exist only so that a
damaged or hostile file fails fast. docs/routes-file.md ("Limits") lists them.
All values SI.
"""

from __future__ import annotations

# -- numbers (SI) ------------------------------------------------------------------------
MAX_MAGNITUDE = 1e30
"""Any number read from a file or an option: finite and |x| <= this."""
MIN_MAGNITUDE = 1e-30
"""Any non-zero number read from a file or an option: |x| >= this."""
MAX_LENGTH_M = 10.0
"""Coordinates, heights and sizes, m: |x| <= 10 m."""
MIN_SIZE_M = 1e-9
"""Widths, thicknesses, radii, the snap distance, m: >= 1 nm."""
RESISTIVITY_RANGE = (1e-10, 1.0)
"""ohm*m (copper 1.7e-8; the range takes any conductor, common practice)."""
MAX_TEMPERATURE_COEFFICIENT = 1.0
"""1/K, in magnitude (copper 0.0039)."""
TEMPERATURE_RANGE_C = (-273.15, 1000.0)
"""degC, the lower end excluded (copper melts at 1085 degC)."""
FREQUENCY_RANGE_HZ = (1e-6, 1e12)
"""``--frequency``, Hz: 1 uHz to 1 THz."""

# -- sizes -------------------------------------------------------------------------------
MAX_NESTING = 32
"""Tables and arrays inside each other in a routes file (a point is 3 deep)."""
MAX_POINTS_PER_ENTRY = 10_000
"""Points of one trace, outline or lead."""
MAX_ENTRIES_PER_KIND = 20_000
"""``[[trace]]``, ``[[pin]]``, ... entries of one kind in one file."""
MAX_ROUTES_ARRAYS = 400_000
"""Arrays (``[``) in a routes file, counted before it is parsed: 200,000 points."""
MAX_PIECES = 10_000
"""Pieces of copper (segments, and pour cells) of one board: the inductance
matrix of N pieces takes 8 N^2 bytes (800 MB at the limit)."""
MAX_PIECES_FAST = 1_000_000
"""Pieces of copper of one board held as the inductance operator (``report`` and
``check`` with ``--inductance fast``): memory linear in N, checked separately."""
MAX_INCLUDE_DEPTH = 32
"""``.include`` / ``.lib`` files inside each other."""
MAX_SUBCKT_DEPTH = 64
"""``.subckt`` definitions inside each other."""
