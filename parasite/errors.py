"""The project's error types: one base class, narrow subclasses.

Every error names the file and the place in it (a line number, a key path such
as ``trace[3].width``, or both). The command line prints ``str(error)`` on
standard error and exits with code 1.
"""

from __future__ import annotations

from os import PathLike


class ParasiteError(Exception):
    """Input in error. ``str()`` gives ``FILE:LINE: error: [KEY: ]MESSAGE``
    when the line is known, else ``FILE: KEY: error: MESSAGE``."""

    def __init__(
        self,
        message: str,
        *,
        file: str | PathLike[str] | None = None,
        line: int | None = None,
        key: str | None = None,
    ) -> None:
        super().__init__(message)
        self.message = message
        self.file = None if file is None else str(file)
        self.line = line
        self.key = key

    def __str__(self) -> str:
        file = self.file if self.file is not None else "<input>"
        if self.line is not None:
            prefix = f"{file}:{self.line}: error: "
            return prefix + (f"{self.key}: " if self.key else "") + self.message
        if self.key:
            return f"{file}: {self.key}: error: {self.message}"
        return f"{file}: error: {self.message}"


class NetlistError(ParasiteError):
    """The SPICE netlist (or a file it includes) is in error."""


class ExtractionError(ParasiteError):
    """The copper cannot be turned into a valid circuit model (for example an
    inductance matrix that is not positive definite)."""


class SimulationError(ParasiteError):
    """ngspice failed, or its output cannot be read."""


class MeasurementError(ParasiteError):
    """A measured waveform file cannot be read."""


class OutputError(ParasiteError):
    """An output cannot be written (for example it would overwrite an input)."""
