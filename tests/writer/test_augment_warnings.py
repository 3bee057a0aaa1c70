"""augment warns when an inductor element starts with a current on a net that
now has copper (its copper starts at 0 A under uic)."""

from __future__ import annotations

from pathlib import Path

from parasite.augment import augment_files
from tests.boards import ONE_LAYER as HEAD
from tests.boards import pin as _pin
from tests.boards import trace as _trace


def test_inductor_initial_current_on_a_routed_net_is_warned(tmp_path: Path) -> None:
    net = tmp_path / "c.cir"
    net.write_text("ic test\nV1 a 0 DC 1\nL1 b 0 1u ic=2\nR1 a b 1\nLQ a 0 1u ic=0\n"
                   ".tran 1n 10n uic\n.end\n")
    routes = tmp_path / "c.routes.toml"
    routes.write_text(HEAD + _trace("b", [(0, 0), (10, 0)], 0.5)
                      + _pin("R1:2", (0, 0)) + _pin("L1:1", (10, 0)))
    warnings = augment_files(str(net), str(routes)).report["warnings"]
    assert any(w.startswith("L1 starts with ic=2 on net b") for w in warnings), warnings
    assert not any(w.startswith("LQ") for w in warnings)  # ic=0, and net a has no copper
