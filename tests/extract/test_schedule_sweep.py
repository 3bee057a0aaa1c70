"""The scheduling seam (parasite.schedule) and the frequency sweep on it: the same
numbers in this process and on a Dask cluster of two worker processes.

Reference: the in-process run of the same functions (the claim tested is that the
place where the work runs does not change a single bit), and the nodal solve of
parasite.extract.pour_solve at each point (itself tested against modified nodal
analysis in test_pour_solve.py). The distributed path uses a real
``distributed.LocalCluster`` (worker processes), never a mock.
"""

from __future__ import annotations

import numpy as np
import pytest
from shapely.geometry import box

from geometry.model import Copper
from parasite.errors import ParasiteError
from parasite.extract import inductance_matrix, resistances
from parasite.extract.pour_solve import solve_port
from parasite.extract.sweep import port_sweep
from parasite.schedule import ENV, run_map, scheduler_address
from tests.extract.pour_cases import trace_over_plane

FREQS = [0.0, 1e5, 1e6, 1e7, 1e8]


def _scene():
    sc = trace_over_plane(10e-3, 1e-3, box(-3e-3, -4e-3, 13e-3, 4e-3), 1e-3)
    L = inductance_matrix(sc.arrays)
    R = resistances(sc.arrays, Copper())
    return sc, L, R


def _square(x: float) -> float:
    return x * x


def test_in_process_default_and_env(monkeypatch: pytest.MonkeyPatch) -> None:
    """No address: in process; the environment variable is read, an empty one ignored."""
    monkeypatch.delenv(ENV, raising=False)
    assert scheduler_address() is None
    monkeypatch.setenv(ENV, "")
    assert scheduler_address() is None
    monkeypatch.setenv(ENV, "tcp://127.0.0.1:1")
    assert scheduler_address() == "tcp://127.0.0.1:1"
    assert scheduler_address("") is None
    assert run_map(_square, [1.0, 2.0, 3.0], scheduler="") == [1.0, 4.0, 9.0]


def test_unreachable_scheduler_is_a_clear_error() -> None:
    """A scheduler address where nothing listens: the package's error naming it."""
    with pytest.raises(ParasiteError, match="127.0.0.1:9"):
        run_map(_square, [1.0], scheduler="tcp://127.0.0.1:9")


def test_sweep_in_process_matches_the_nodal_solve() -> None:
    """Each point of the sweep is the single-frequency solve (same function, same
    inputs; bit for bit)."""
    sc, L, R = _scene()
    sweep = port_sweep(sc.arrays.node_from, sc.arrays.node_to, sc.n_nodes, L, R, FREQS,
                       sc.plus, sc.minus)
    for f, sol in zip(FREQS, sweep, strict=True):
        ref = solve_port(sc.arrays.node_from, sc.arrays.node_to, sc.n_nodes, L, R, f,
                         sc.plus, sc.minus)
        assert sol.frequency == f
        assert sol.inductance == pytest.approx(ref.inductance, rel=1e-12)
        assert sol.resistance == pytest.approx(ref.resistance, rel=1e-12)


def test_local_cluster_of_two_processes_is_byte_identical() -> None:
    """The sweep on a LocalCluster of two worker processes gives the same bytes as in
    process (currents, impedances)."""
    distributed = pytest.importorskip("distributed")
    sc, L, R = _scene()
    args = (sc.arrays.node_from, sc.arrays.node_to, sc.n_nodes, L, R, FREQS, sc.plus,
            sc.minus)
    local = port_sweep(*args)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        remote = port_sweep(*args, scheduler=client)
        by_address = port_sweep(*args, scheduler=cluster.scheduler_address)
        workers = {w for w in client.has_what()}
    assert len(workers) == 2
    for a, b, c in zip(local, remote, by_address, strict=True):
        assert a.currents.tobytes() == b.currents.tobytes() == c.currents.tobytes()
        assert np.array([a.impedance]).tobytes() == np.array([b.impedance]).tobytes()
        assert a.inductance == b.inductance == c.inductance


def test_sweep_on_the_operator_against_the_dense_sweep_and_on_a_cluster() -> None:
    """The sweep with the inductance as an operator (FastInductance: exact near field,
    multipole far field; GMRES at each point, the resistive division at 0 Hz) against
    the dense sweep (numpy's direct solves): loop inductance and resistance within
    0.1 % at every point; and on a LocalCluster of two worker processes the same bytes
    as in process (the operator is sent to the workers; each point runs the same
    function on the same inputs, one BLAS/OpenMP thread in both places)."""
    distributed = pytest.importorskip("distributed")
    from parasite.extract.operator import FastInductance

    sc, L, R = _scene()
    freqs = [0.0, 1e6, 1e8]
    a = sc.arrays
    op = FastInductance(a)
    args = (a.node_from, a.node_to, sc.n_nodes, op, R, freqs, sc.plus, sc.minus)
    local = port_sweep(*args)
    dense = port_sweep(a.node_from, a.node_to, sc.n_nodes, L, R, freqs, sc.plus, sc.minus)
    for f, got, ref in zip(freqs, local, dense, strict=True):
        assert got.frequency == f
        assert got.inductance == pytest.approx(ref.inductance, rel=1e-3, abs=0)
        assert got.resistance == pytest.approx(ref.resistance, rel=1e-3, abs=0)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        remote = port_sweep(*args, scheduler=client)
    for x, y in zip(local, remote, strict=True):
        assert x.currents.tobytes() == y.currents.tobytes()
        assert np.array([x.impedance]).tobytes() == np.array([y.impedance]).tobytes()
