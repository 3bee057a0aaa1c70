"""Nesting and size limits (issue 19; geometry/limits.py, documented in
docs/routes-file.md "Limits"): each gives a clear error naming the file, not a
RecursionError, a hang or exhausted memory. The limits are far above any real
board (common practice, see the module)."""

from __future__ import annotations

import json

from geometry.limits import (
    MAX_ENTRIES_PER_KIND,
    MAX_INCLUDE_DEPTH,
    MAX_POINTS_PER_ENTRY,
    MAX_SUBCKT_DEPTH,
)
from tests.hostile.helpers import BOARD_CIR, board_routes, put, run_cli


def _augment(folder, cir="b.cir", routes="b.routes.toml"):
    return run_cli(folder, "augment", cir, routes, "-o", "out.cir", "-q")


def test_400_nested_includes(tmp_path):
    n = 400
    for i in range(n):
        put(tmp_path, f"i{i}.cir", f".include i{i + 1}.cir\n")
    put(tmp_path, f"i{n}.cir", "R2 b 0 10\n")
    put(tmp_path, "b.cir", "t\nV1 a 0 DC 1\nR1 a b 10\n.include i0.cir\n.end\n")
    put(tmp_path, "b.routes.toml", board_routes())
    r = _augment(tmp_path)
    assert r.code == 1 and str(MAX_INCLUDE_DEPTH) in r.stderr and not r.written


def test_1000_nested_subckts(tmp_path):
    n = 1000
    body = "".join(f".subckt s{i} x y\n" for i in range(n)) + "R9 x y 1\n" + ".ends\n" * n
    put(tmp_path, "b.cir", BOARD_CIR.replace(".end\n", body + ".end\n"))
    put(tmp_path, "b.routes.toml", board_routes())
    r = _augment(tmp_path)
    assert r.code == 1 and "b.cir:" in r.stderr and str(MAX_SUBCKT_DEPTH) in r.stderr
    assert not r.written


def test_toml_nested_500_deep(tmp_path):
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes() + "x = " + "[" * 500 + "]" * 500 + "\n")
    r = _augment(tmp_path)
    assert r.code == 1 and r.stderr.startswith("b.routes.toml") and not r.written


def test_json_nested_500_deep(tmp_path):
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.json", '{"format": "parasite-routes/1", "units": "mm", "x": '
        + "[" * 500 + "]" * 500 + "}")
    r = _augment(tmp_path, routes="b.routes.json")
    assert r.code == 1 and r.stderr.startswith("b.routes.json") and not r.written


def test_json_nested_40_deep_is_a_located_error(tmp_path):
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.json", '{"format": "parasite-routes/1", "units": "mm", "x": '
        + "[" * 40 + "]" * 40 + "}")
    r = _augment(tmp_path, routes="b.routes.json")
    assert r.code == 1 and "nested" in r.stderr and not r.written


def test_a_trace_with_too_many_points(tmp_path):
    n = MAX_POINTS_PER_ENTRY + 1
    pts = ", ".join(f"[{10 * i / n:.6f}, 0]" for i in range(n))
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes(point=pts))
    r = _augment(tmp_path)
    assert r.code == 1 and "trace[0].points" in r.stderr and not r.written


def test_too_many_pins(tmp_path):
    pins = "".join(f'[[pin]]\nterminal = "R{i}:1"\nat = [0, 0]\nlayer = "top"\n\n'
                   for i in range(MAX_ENTRIES_PER_KIND + 1))
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes(pins))
    r = _augment(tmp_path)
    assert r.code == 1 and "pin" in r.stderr and not r.written


def test_a_million_points_is_refused_before_parsing(tmp_path):
    """The issue's memory check: refused by the count of arrays, before the
    file is parsed (how fast is measured in benchmarks/bench_hostile.py, not
    here)."""
    pts = [[i * 1e-3, 0.0] for i in range(1_000_000)]
    text = json.dumps({"format": "parasite-routes/1", "units": "mm",
                       "trace": [{"net": "a", "layer": "top", "width": 0.5, "points": pts}]})
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.json", text)
    r = _augment(tmp_path, routes="b.routes.json")
    assert r.code == 1 and "arrays" in r.stderr and not r.written


def test_too_many_pieces_are_refused_before_the_matrix(tmp_path, monkeypatch):
    """The piece limit (10,000: an 800 MB matrix) lowered to 1 for the test;
    the board's one trace split at its pins makes more pieces than that: the dense
    path refuses it; ``auto`` holds it as the operator instead."""
    import geometry.limits

    monkeypatch.setattr(geometry.limits, "MAX_PIECES", 1)
    put(tmp_path, "b.cir", BOARD_CIR)
    put(tmp_path, "b.routes.toml", board_routes(point="[0, 0], [5, 0], [10, 0]"))
    r = run_cli(tmp_path, "augment", "b.cir", "b.routes.toml", "-o", "out.cir", "-q",
                "--inductance", "dense")
    assert r.code == 1 and "pieces" in r.stderr and r.stderr.startswith("b.routes.toml")
    assert not r.written
    # auto takes the inductance operator past the dense path's limit, and writes
    r = _augment(tmp_path)
    assert r.code == 0 and r.written == {"out.cir"}
    assert "reduced model" in (tmp_path / "out.cir").read_text()
