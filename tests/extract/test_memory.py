"""The dense run's memory estimate refuses a board that would not fit, before the
matrix is allocated (exit 1, the routes file named, nothing written)."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from parasite.cli import main
from parasite.extract.memory import dense_bytes
from tests.boards import ROOT

FX = ROOT / "fixtures" / "routes"


def test_estimate_is_four_matrices() -> None:
    """8 N^2 bytes per float64 matrix (common practice), four of them at the peak."""
    assert dense_bytes(1000) == 4 * 8 * 1000 ** 2


@pytest.mark.parametrize("limit, refused", [("1meg", True), ("64g", False)])
def test_board_over_the_memory_limit_is_refused(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                limit: str, refused: bool) -> None:
    """fixtures/routes/pour_plane (trace over a meshed pour, some hundred pieces: a
    dense estimate of a few MB) under a 1 MB limit: exit 1 naming the routes file
    and the need, nothing written; under 64 GB the same run succeeds."""
    monkeypatch.setenv("PARASITE_MEMORY_LIMIT", limit)
    out = tmp_path / "o.cir"
    routes = str(FX / "pour_plane.routes.toml")
    res = CliRunner().invoke(main, ["augment", str(FX / "pour_plane.cir"), routes,
                                    "-o", str(out), "-q"])
    if refused:
        assert res.exit_code == 1 and not out.exists()
        assert f"{routes}: error:" in res.output and "GiB" in res.output
        assert "PARASITE_MEMORY_LIMIT" in res.output
    else:
        assert res.exit_code == 0, res.output
        assert out.exists()


def test_bad_limit_is_an_error(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("PARASITE_MEMORY_LIMIT", "lots")
    out = tmp_path / "o.cir"
    res = CliRunner().invoke(main, ["augment", str(FX / "pour_plane.cir"),
                                    str(FX / "pour_plane.routes.toml"), "-o", str(out), "-q"])
    assert res.exit_code == 1 and not out.exists() and "PARASITE_MEMORY_LIMIT" in res.output
