"""``parasite batch``: the reports of several boards in one run.

Reference for the reports: ``parasite report NETLIST ROUTES --format json`` run on the
same files (the claim is that a batch writes exactly what that command prints for each
board). The rest is the command-line contract (/work/shared/spec/command-line.md in
the project's notes; exit codes 1, 2, 3, nothing written on an error, an input never
overwritten) checked on fixture boards and boards written in tmp_path (invented test
scenarios). The cluster is a real ``distributed.LocalCluster`` of two worker
processes, never a mock.
"""

from __future__ import annotations

import json
import shutil
import socket
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from parasite.cli import EXIT_INPUT_ERROR, EXIT_OVER_LIMIT, EXIT_USAGE, main
from parasite.cli.batch_cmd import report_name
from parasite.schedule import ENV
from tests.boards import ROUTES
from tests.cli.test_batch import _close

CROSSING = (str(ROUTES / "crossing.cir"), str(ROUTES / "crossing.routes.toml"))
POUR = (str(ROUTES / "pour_plane.cir"), str(ROUTES / "pour_plane.routes.toml"))
ISLAND = (str(ROUTES / "island.cir"), str(ROUTES / "island.routes.toml"))


@pytest.fixture(autouse=True)
def _in_process(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv(ENV, raising=False)


def _batch(*args: str) -> Result:
    return CliRunner().invoke(main, ["batch", *args])


def _report(cir: str, rt: str, out: Path, *extra: str) -> bytes:
    res = CliRunner().invoke(main, ["report", cir, rt, "--format", "json", "-o", str(out),
                                    "-q", *extra])
    assert res.exit_code == 0, res.output
    return out.read_bytes()


def _files(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir()) if folder.exists() else []


@pytest.mark.parametrize("inductance", ["auto", "fast"])
def test_batch_writes_what_report_prints_for_each_board(tmp_path: Path, inductance: str) -> None:
    out = tmp_path / "reports" / "deeper"  # created, parents too
    res = _batch("-o", str(out), *CROSSING, *POUR, *ISLAND, "--inductance", inductance)
    assert res.exit_code == 0, res.output
    assert _files(out) == ["crossing.json", "island.json", "pour_plane.json"]
    for cir, rt in (CROSSING, POUR, ISLAND):
        ref = _report(cir, rt, tmp_path / "ref.json", "--inductance", inductance)
        assert (out / report_name(rt)).read_bytes() == ref, rt
    # standard output: the table only, one line per board, in the order given
    lines = res.stdout.splitlines()
    assert lines[0].split() == ["output", "segments", "loops", "over", "limit", "mutual", "over",
                                "limit"]
    assert [ln.split()[0] for ln in lines[1:]] == [str(out / n) for n in
                                                   ("crossing.json", "pour_plane.json",
                                                    "island.json")]
    # crossing.routes.toml: two 10 mm traces crossing at their middles, both split there
    # (hand-derived in the fixture: 4 segments), no [[loop]]
    assert lines[1].split()[1:] == ["4", "0", "0", "0"]
    assert lines[2].split()[2:] == ["1", "0", "0"]  # pour_plane: one [[loop]], no limit
    # standard error: progress per board, and the island board's warning with its file
    assert res.stderr.count(": reported (") == 3
    assert f"{ISLAND[1]}:15: warning: trace[1]: copper island" in res.stderr
    quiet = _batch("-o", str(tmp_path / "q"), *CROSSING, *ISLAND, "-q")
    assert quiet.exit_code == 0, quiet.output
    assert ": reported (" not in quiet.stderr and "copper island" in quiet.stderr


@pytest.mark.parametrize("threads", [False, True])
def test_run_map_tells_each_item_once_as_it_arrives(threads: bool) -> None:
    """The progress seam of the batch: ``item_done(index)`` once per item, after its
    result, the results in the items' order."""
    from parasite.schedule import run_map

    items = [-3, 1, -2, 5]
    computed: list[int] = []
    told: list[tuple[int, bool]] = []

    def work(x: int) -> int:
        computed.append(x)
        return abs(x)

    got = run_map(work, items, threads=threads,
                  item_done=lambda i: told.append((i, items[i] in computed)))
    assert got == [3, 1, 2, 5]
    assert sorted(told) == [(0, True), (1, True), (2, True), (3, True)]


def test_report_names() -> None:
    assert report_name("a/board.routes.toml") == "board.json"
    assert report_name("board.routes.json") == "board.json"
    assert report_name("x/board.toml") == "board.json"
    assert report_name(".routes.toml") == ".routes.json"


def test_odd_number_of_files_is_a_usage_error(tmp_path: Path) -> None:
    res = _batch("-o", str(tmp_path / "out"), *CROSSING, POUR[0])
    assert res.exit_code == EXIT_USAGE
    assert "pairs NETLIST ROUTES" in res.stderr and "odd" in res.stderr
    assert POUR[0] in res.stderr
    assert not (tmp_path / "out").exists()


def test_standard_input_and_no_folder_at_dir_are_usage_errors(tmp_path: Path) -> None:
    res = _batch("-o", str(tmp_path / "out"), "-", CROSSING[1])
    assert res.exit_code == EXIT_USAGE and "standard input" in res.stderr
    file = tmp_path / "file"
    file.write_text("x")
    res = _batch("-o", str(file), *CROSSING)
    assert res.exit_code == EXIT_USAGE and "is a file" in res.stderr
    assert file.read_text() == "x"
    for name in ("-", ""):
        res = _batch("-o", name, *CROSSING)
        assert res.exit_code == EXIT_USAGE and "give a folder" in res.stderr


def test_a_bad_routes_file_in_the_second_board_writes_nothing(tmp_path: Path) -> None:
    bad = tmp_path / "not_toml.routes.toml"
    shutil.copy(ROUTES / "bad" / "not_toml.routes.toml", bad)
    out = tmp_path / "out"
    res = _batch("-o", str(out), *CROSSING, CROSSING[0], str(bad))
    assert res.exit_code == EXIT_INPUT_ERROR, res.output
    # the file's line 16 is `width = = 1.0` (fixtures/routes/bad/not_toml.routes.toml)
    assert f"{bad}:16: error:" in res.stderr
    assert res.stdout == ""
    assert not out.exists()  # not even the first board's report, nor the folder
    out.mkdir()
    res = _batch("-o", str(out), *CROSSING, CROSSING[0], str(bad))
    assert res.exit_code == EXIT_INPUT_ERROR and _files(out) == []


def test_a_board_too_big_for_the_memory_writes_nothing(tmp_path: Path,
                                                      monkeypatch: pytest.MonkeyPatch) -> None:
    """The size check of every board comes before any work: with 1 MB allowed, the
    dense estimate (4 x 8 N^2 bytes, parasite/extract/memory.py; over 1 MB from
    N = 177) refuses pour_plane, whose 24 x 10 mm pour meshed in cells of 0.75 to 3 mm
    makes hundreds of pieces, and passes crossing (4 pieces)."""
    monkeypatch.setenv("PARASITE_MEMORY_LIMIT", "1meg")
    out = tmp_path / "out"
    res = _batch("-o", str(out), *CROSSING, *POUR, "--inductance", "dense")
    assert res.exit_code == EXIT_INPUT_ERROR, res.output
    assert res.stderr.startswith(f"{POUR[1]}: error: ")
    assert "pieces of copper need about" in res.stderr
    assert ": reported (" not in res.stderr  # no board's work started
    assert not out.exists()


def test_an_error_during_extraction_writes_nothing(tmp_path: Path) -> None:
    """fixtures/routes/loops: loops but no copper, accepted when read; the inductance
    operator needs segments, so ``--inductance fast`` fails in that board's work,
    after the first board's report was computed."""
    out = tmp_path / "out"
    out.mkdir()
    loops = (str(ROUTES / "loops.cir"), str(ROUTES / "loops.routes.toml"))
    res = _batch("-o", str(out), *CROSSING, *loops, "--inductance", "fast", "-q")
    assert res.exit_code == EXIT_INPUT_ERROR, res.output
    assert f"{loops[1]}: error:" in res.stderr and "no copper" in res.stderr
    assert _files(out) == []


def test_two_boards_with_one_report_name_is_a_usage_error(tmp_path: Path) -> None:
    json_rt = str(ROUTES / "t_junction.routes.json")
    toml_rt = str(ROUTES / "t_junction.routes.toml")
    cir = str(ROUTES / "t_junction.cir")
    res = _batch("-o", str(tmp_path / "out"), cir, toml_rt, cir, json_rt)
    assert res.exit_code == EXIT_USAGE
    assert toml_rt in res.stderr and json_rt in res.stderr and "t_junction.json" in res.stderr
    assert not (tmp_path / "out").exists()


def _limited_pour(folder: Path, limit: str) -> tuple[str, str]:
    """fixtures/routes/pour_plane with a limit on its loop (the last entry)."""
    cir, rt = folder / "pour.cir", folder / "pour.routes.toml"
    shutil.copy(POUR[0], cir)
    rt.write_text(Path(POUR[1]).read_text() + f"limit = {limit}\n")
    return str(cir), str(rt)


def test_check_exits_3_after_writing_when_a_loop_is_over_its_limit(tmp_path: Path) -> None:
    # a 20 mm trace 0.5 mm wide, 0.2 mm over its return: a few nH (0.27 nH/mm by the
    # narrow-microstrip estimate (mu0 / 2 pi) ln(8h/w + w/4h), from memory); 1 pH is
    # far below and 1 uH far above
    over = _limited_pour(tmp_path, "1e-12")
    (tmp_path / "ok").mkdir()
    within = _limited_pour(tmp_path / "ok", "1e-6")
    out = tmp_path / "out"
    res = _batch("-o", str(out), *CROSSING, *over, "--check", "-q")
    assert res.exit_code == EXIT_OVER_LIMIT, res.output
    assert _files(out) == ["crossing.json", "pour.json"]  # written all the same
    line = res.stderr.strip().splitlines()[-1]
    limit_line = Path(over[1]).read_text().count("\n")  # the appended last line
    assert line.startswith(f"{over[1]}:")
    assert "loop 'load loop' is over its limit:" in line and line.endswith("> 1 pH")
    assert int(line.split(":")[1]) < limit_line  # the [[loop]] entry's line, before it
    alone = CliRunner().invoke(main, ["check", *over, "-q"])  # as check says it
    assert alone.exit_code == EXIT_OVER_LIMIT
    assert alone.stderr.strip().splitlines()[-1] == line
    assert res.stdout.splitlines()[2].split()[2:4] == ["1", "1"]
    plain = _batch("-o", str(tmp_path / "plain"), *over, "-q")
    assert plain.exit_code == 0, plain.output  # without --check: the table says it
    ok = _batch("-o", str(tmp_path / "ok2"), *within, "--check", "-q")
    assert ok.exit_code == 0, ok.output


def test_an_output_equal_to_an_input_is_refused(tmp_path: Path) -> None:
    # the netlist of the board is itself named as its report would be
    cir = tmp_path / "crossing.json"
    shutil.copy(CROSSING[0], cir)
    before = cir.read_bytes()
    res = _batch("-o", str(tmp_path), *POUR, str(cir), CROSSING[1])
    assert res.exit_code == EXIT_INPUT_ERROR, res.output
    assert "refusing to overwrite the input file" in res.stderr
    assert cir.read_bytes() == before
    assert not (tmp_path / "pour_plane.json").exists()
    # a file the netlist includes
    (tmp_path / "sub").mkdir()
    part = tmp_path / "sub" / "crossing.json"
    part.write_text("* nothing\n")
    main_cir = tmp_path / "main.cir"
    main_cir.write_text(Path(CROSSING[0]).read_text().replace(
        ".end", f".include {part}\n.end"))
    res = _batch("-o", str(tmp_path / "sub"), str(main_cir), CROSSING[1])
    assert res.exit_code == EXIT_INPUT_ERROR, res.output
    assert "refusing to overwrite the input file" in res.stderr
    assert part.read_text() == "* nothing\n"


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_unreachable_scheduler_is_exit_1_before_any_work(tmp_path: Path) -> None:
    address = f"tcp://127.0.0.1:{_free_port()}"
    res = _batch("-o", str(tmp_path / "out"), *CROSSING, "--scheduler", address)
    assert res.exit_code == EXIT_INPUT_ERROR
    assert address in res.stderr and "dask scheduler" in res.stderr
    assert not (tmp_path / "out").exists()


def test_batch_on_a_local_cluster_gives_the_same_bytes(tmp_path: Path) -> None:
    """The same bytes as in process: on the fast path, and on the dense path of boards
    too small for more than one BLAS thread; the dense path of a bigger board
    (pour_plane, 438 pieces) to rounding, as the workers run one BLAS thread and this
    process two (parasite.batch: measured 4e-13 relative)."""
    distributed = pytest.importorskip("distributed")
    runs = {"dense": [*CROSSING, *ISLAND, *POUR], "fast": [*CROSSING, *POUR]}
    for how, boards in runs.items():
        res = _batch("-o", str(tmp_path / "here" / how), *boards, "--inductance", how, "-q")
        assert res.exit_code == 0, res.output
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        for how, boards in runs.items():
            res = _batch("-o", str(tmp_path / "there" / how), *boards, "--inductance", how,
                         "--scheduler", cluster.scheduler_address)
            assert res.exit_code == 0, res.output
            assert f"on {cluster.scheduler_address}" in res.stderr
            assert res.stderr.count(": reported (") == len(boards) // 2
        # an error in a board's work on a worker: the same exit 1 naming the file
        loops = (str(ROUTES / "loops.cir"), str(ROUTES / "loops.routes.toml"))
        res = _batch("-o", str(tmp_path / "err"), *CROSSING, *loops, "--inductance", "fast",
                     "--scheduler", cluster.scheduler_address, "-q")
        assert res.exit_code == EXIT_INPUT_ERROR, res.output
        assert f"{loops[1]}: error:" in res.stderr and "no copper" in res.stderr
        assert not (tmp_path / "err").exists()
        ran = {str(k) for k in cluster.scheduler.task_prefixes}
    assert "apply" in ran  # the boards ran there
    for how, names in (("dense", ["crossing.json", "island.json"]),
                       ("fast", ["crossing.json", "pour_plane.json"])):
        for name in names:
            there = (tmp_path / "there" / how / name).read_bytes()
            assert there == (tmp_path / "here" / how / name).read_bytes(), (how, name)
    _close(json.loads((tmp_path / "here" / "dense" / "pour_plane.json").read_bytes()),
           json.loads((tmp_path / "there" / "dense" / "pour_plane.json").read_bytes()))
