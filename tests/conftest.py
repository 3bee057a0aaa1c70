"""Shared test configuration: the report header names the versions that the
numbers were checked with."""

from __future__ import annotations

import shutil
import subprocess
import tempfile

import numpy
import scipy
from hypothesis import settings
from hypothesis.configuration import set_hypothesis_home_dir

# Tests write nothing into the work tree: no example database, and hypothesis's own
# storage (constants, unicode tables) in a fresh folder under TMPDIR.
set_hypothesis_home_dir(tempfile.mkdtemp(prefix="parasite-hypothesis-"))
settings.register_profile("parasite", database=None)
settings.load_profile("parasite")


def _ngspice_version() -> str:
    exe = shutil.which("ngspice")
    if exe is None:
        return "not found"
    try:
        out = subprocess.run([exe, "-v"], capture_output=True, text=True, timeout=20).stdout
    except (OSError, subprocess.SubprocessError):
        return "unreadable"
    for line in out.splitlines():
        if "ngspice-" in line:
            return line.strip(" *")
    return out.strip().splitlines()[0] if out.strip() else "unknown"


def _gnucap_version() -> str:
    exe = shutil.which("gnucap")
    if exe is None:
        return "gnucap not found"
    try:  # the banner, printed before gnucap reads commands (none: standard input is empty)
        out = subprocess.run([exe], input="", capture_output=True, text=True, timeout=20).stdout
    except (OSError, subprocess.SubprocessError):
        return "gnucap unreadable"
    for line in out.splitlines():
        if line.startswith("main version:"):
            return "gnucap " + line.split(":", 1)[1].strip()
    return "gnucap unknown"


def pytest_report_header(config: object) -> list[str]:
    return [f"numpy {numpy.__version__}, scipy {scipy.__version__}, {_ngspice_version()}, "
            f"{_gnucap_version()}"]
