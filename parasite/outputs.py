"""Writing results: all outputs of a command checked before any is written,
then written together (each atomically), never over an input.

An output is refused (:class:`OutputError`, nothing written) when its name is
empty, names a folder, lies in a folder that does not exist, is one of the
inputs or a file an input includes (``.include`` / ``.lib``), or is named
twice. Each file is first written to a temporary file in its own folder; only
when every temporary file is complete are they renamed over their targets, so a
command that fails leaves nothing behind.
"""

from __future__ import annotations

import os
import sys
import tempfile
from collections.abc import Iterable, Sequence
from pathlib import Path

from parasite.errors import OutputError


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and os.path.samefile(a, b))
    except (OSError, RuntimeError, ValueError):
        return False


def _check_one(output: str, inputs: Sequence[str | Path]) -> None:
    if not output.strip():
        raise OutputError("the output name is empty; give a file name or - for standard output",
                          file=repr(output))
    out = Path(output)
    try:
        is_dir = out.is_dir()
        folder = out.parent if str(out.parent) else Path(".")
        folder_ok = folder.is_dir()
    except (OSError, ValueError) as exc:
        raise OutputError(f"cannot use this output: {exc}", file=output) from None
    if is_dir or output.endswith(("/", os.sep)):
        raise OutputError("the output names a folder; give a file name", file=output)
    if not folder_ok:
        raise OutputError(f"the folder {str(folder)!r} does not exist", file=output)
    for name in inputs:
        if name in (None, "-"):
            continue
        if _same_file(out, Path(name)):
            raise OutputError(f"refusing to overwrite the input file {str(name)!r}", file=output)


def check_outputs(outputs: Iterable[str | None], inputs: Iterable[str | Path | None]) -> None:
    """Check every output of a command (``None`` or ``-``: standard output, once)
    before anything is written; raises :class:`OutputError`."""
    ins = [i for i in inputs if i is not None]
    seen: list[str] = []
    stdout = 0
    for output in outputs:
        if output is None or output == "-":
            stdout += 1
            if stdout > 1:
                raise OutputError("two outputs go to standard output; name a file for one",
                                  file="-")
            continue
        _check_one(output, ins)
        for other in seen:
            if _same_file(Path(output), Path(other)):
                raise OutputError(f"the same file is named for two outputs ({other!r})",
                                  file=output)
        seen.append(output)


def check_output_path(output: str | None, inputs: Iterable[str | Path | None]) -> None:
    """Check one output path (see :func:`check_outputs`)."""
    check_outputs([output], inputs)


def write_outputs(items: Sequence[tuple[str | None, bytes]],
                  inputs: Iterable[str | Path | None] = ()) -> None:
    """Write every ``(output, data)`` of a command: all checked first, all files
    written to temporary files, then all renamed; standard output last."""
    check_outputs([o for o, _ in items], inputs)
    temps: list[tuple[str, Path]] = []
    try:
        for output, data in items:
            if output is None or output == "-":
                continue
            target = Path(output)
            folder = target.parent if str(target.parent) else Path(".")
            try:
                fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
            except OSError as exc:
                raise OutputError(f"cannot write here: {exc.strerror or exc}",
                                  file=output) from None
            temps.append((tmp, target))
            try:
                with os.fdopen(fd, "wb") as fh:
                    fh.write(data)
                os.chmod(tmp, 0o644)
            except OSError as exc:
                raise OutputError(f"cannot write: {exc.strerror or exc}", file=output) from None
        for tmp, target in temps:
            os.replace(tmp, target)
        temps.clear()
    finally:
        for tmp, _ in temps:
            try:
                os.unlink(tmp)
            except OSError:
                pass
    for output, data in items:
        if output is None or output == "-":
            sys.stdout.buffer.write(data)
            sys.stdout.buffer.flush()


def write_output(output: str | None, data: bytes, inputs: Iterable[str | Path | None] = ()) -> None:
    """Write ``data`` to ``output`` (``None`` or ``-``: standard output), see
    :func:`write_outputs`."""
    write_outputs([(output, data)], inputs)


def input_files(netlist: str, routes: str, netlist_obj: object | None = None) -> list[str | Path]:
    """The inputs no output may overwrite: the two arguments and every file the
    netlist includes (``netlist_obj``: a :class:`parasite.netlist.Netlist`)."""
    files: list[str | Path] = [netlist, routes]
    files += list(getattr(netlist_obj, "included_files", []) or [])
    return files
