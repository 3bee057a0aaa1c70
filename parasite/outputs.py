"""Writing results: atomically, deterministically, never over an input."""

from __future__ import annotations

import os
import sys
import tempfile
from collections.abc import Iterable
from pathlib import Path

from parasite.errors import OutputError


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and os.path.samefile(a, b))
    except OSError:
        return False


def check_output_path(output: str | None, inputs: Iterable[str | None]) -> None:
    """Refuse an output path equal to any input path (raises :class:`OutputError`)."""
    if output in (None, "-"):
        return
    out = Path(output)
    for name in inputs:
        if name in (None, "-"):
            continue
        if _same_file(out, Path(name)):
            raise OutputError(f"refusing to overwrite the input file {name!r}", file=output)


def write_output(output: str | None, data: bytes, inputs: Iterable[str | None] = ()) -> None:
    """Write ``data`` to ``output`` (``None`` or ``-``: standard output).

    A file is written to a temporary file in the same folder, then renamed over
    the target, so a reader never sees half a file. An output equal to one of
    ``inputs`` is refused before anything is written.
    """
    check_output_path(output, inputs)
    if output in (None, "-"):
        sys.stdout.buffer.write(data)
        sys.stdout.buffer.flush()
        return
    target = Path(output)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"the folder {str(folder)!r} does not exist", file=output)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
        os.chmod(tmp, 0o644)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
