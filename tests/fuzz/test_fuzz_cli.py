"""Property-based fuzzing of the command line (issue 19): structure-aware
mutations of the netlist, the routes file (TOML and JSON) and the command
line, checked against the contract of docs/command-line.md:

* the exit code is 0, 1, 2 or 3, and no exception escapes (no traceback);
* on exit 1 the message names a file of the command (an input or an output);
* on any exit but 0 nothing is written; the inputs never change;
* what is written is finite and parseable: the JSON report parses with no
  NaN or Infinity, the netlist holds no ``inf`` or ``nan`` value.

The example count is small in the everyday suite; ``make fuzz`` sets
``PARASITE_FUZZ_EXAMPLES`` for the long run (see DEVELOPERS.md). Boards are
invented (tests/fuzz/strategies.py).
"""

from __future__ import annotations

import json
import os
import re
import shutil
from pathlib import Path

from click.testing import CliRunner
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from parasite.cli import main
from tests.fuzz.strategies import (
    BASE_NETLIST,
    BASE_ROUTES,
    command_lines,
    netlist_texts,
    routes_objects,
    to_toml,
)

EXAMPLES = int(os.environ.get("PARASITE_FUZZ_EXAMPLES", "25"))
FUZZ = settings(max_examples=EXAMPLES, deadline=10_000 if EXAMPLES > 100 else None,
                suppress_health_check=list(HealthCheck), database=None)
_NON_FINITE = re.compile(r"(?<![\w.])[+-]?(inf|infinity|nan)(?![\w.])", re.IGNORECASE)
_counter = [0]


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in folder.rglob("*") if p.is_file()}


def _check(base: Path, netlist: str, extra: dict[str, str], routes: str, routes_name: str,
           args: list[str]) -> None:
    _counter[0] += 1
    folder = base / f"ex{_counter[0]}"
    folder.mkdir()
    try:
        (folder / "b.cir").write_text(netlist, encoding="utf-8", errors="surrogateescape")
        for name, text in extra.items():
            (folder / name).write_text(text)
        (folder / routes_name).write_text(routes, encoding="utf-8", errors="surrogateescape")
        (folder / "sub").mkdir()
        before = _snapshot(folder)
        argv = [args[0], "b.cir", routes_name, "-q", *args[1:]]
        old = os.getcwd()
        os.chdir(folder)
        try:
            res = CliRunner().invoke(main, argv)
        finally:
            os.chdir(old)
        after = _snapshot(folder)
        code = res.exit_code
        event(f"exit {code}")
        if res.exception is not None and not isinstance(res.exception, SystemExit):
            raise AssertionError(f"{argv}: {type(res.exception).__name__}: {res.exception}")
        assert code in (0, 1, 2, 3), (argv, code, res.stderr)
        changed = {k for k in before if after.get(k) != before[k]}
        assert not changed, f"{argv}: inputs changed: {changed}"
        written = set(after) - set(before)
        if code != 0:
            assert code == 3 or not written, f"{argv}: exit {code} but wrote {written}"
        if code == 1:
            names = ["b.cir", routes_name, *extra, *[a if a else "''" for a in args]]
            assert any(n in res.stderr for n in names), (argv, res.stderr)
        json_outputs = {args[i + 1] for i in range(len(args) - 1) if args[i] == "--report"}
        if args[0] == "report" and "json" in args:
            json_outputs |= {args[i + 1] for i in range(len(args) - 1) if args[i] == "-o"}
        allowed = len(_NON_FINITE.findall(_values_only(netlist)))  # the input's own cards
        for name in written:
            data = after[name].decode("utf-8", errors="replace")
            if name in json_outputs:
                json.loads(data, parse_constant=_refuse_constant)
            elif args[0] == "augment":
                found = _NON_FINITE.findall(_values_only(data))
                assert len(found) <= allowed, (argv, name, found)
        if code == 0 and "-o" not in args and args[0] in ("augment", "report"):
            assert res.stdout_bytes, argv
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def _refuse_constant(c: str) -> None:
    raise AssertionError(f"non-finite {c} written in JSON")


def _values_only(text: str) -> str:
    """Card lines of a netlist, without comments (a title may say anything)."""
    return "\n".join(line for line in text.splitlines()[1:]
                     if line and line[0] not in "*;" and not line.startswith("$"))


ROUTES_TOML = to_toml(BASE_ROUTES)
NETLIST = "\n".join(BASE_NETLIST) + "\n"


@FUZZ
@given(routes=routes_objects(), fmt=st.sampled_from(["toml", "json"]))
def test_fuzz_routes_files(tmp_path_factory, routes, fmt):
    base = tmp_path_factory.getbasetemp()
    text = to_toml(routes) if fmt == "toml" else json.dumps(routes)
    _check(base, NETLIST, {}, text, f"b.routes.{fmt}", ["augment", "-o", "out.cir"])


@FUZZ
@given(net=netlist_texts())
def test_fuzz_netlists(tmp_path_factory, net):
    text, extra = net
    _check(tmp_path_factory.getbasetemp(), text, extra, ROUTES_TOML, "b.routes.toml",
           ["augment", "-o", "out.cir", "--report", "r.json"])


@FUZZ
@given(args=command_lines(), net=netlist_texts())
def test_fuzz_command_lines(tmp_path_factory, args, net):
    text, extra = net
    _check(tmp_path_factory.getbasetemp(), text, extra, ROUTES_TOML, "b.routes.toml", args)


def test_the_base_board_is_accepted(tmp_path):
    """Control for the fuzz: the unmutated invented board runs cleanly, so the
    mutations are what the fuzz explores."""
    (tmp_path / "b.cir").write_text(NETLIST)
    (tmp_path / "b.routes.toml").write_text(ROUTES_TOML)
    old = os.getcwd()
    os.chdir(tmp_path)
    try:
        res = CliRunner().invoke(main, ["augment", "b.cir", "b.routes.toml", "-q", "-o", "o.cir",
                                        "--report", "r.json"], catch_exceptions=False)
    finally:
        os.chdir(old)
    assert res.exit_code == 0, res.stderr
    assert any(line[:1] in "Kk" and line.strip() for line in (tmp_path / "o.cir").read_text().splitlines())
