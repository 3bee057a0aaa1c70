"""The command line's connection (parasite.schedule.connected), the in-process
thread per core of run_map, and the reduction's full-network port impedance.

References: the port impedance is checked point by point against the Schur
complement of the mesh matrix written out here with numpy (Z_pp - Z_pm Z_mm^-1 Z_mp
of W^T (R + j w L) W, the loop-variable form of the network: standard circuit
theory, e.g. Chua, Desoer, Kuh, "Linear and nonlinear circuits", 1987, ch. 12), to
1e-12 relative (rounding of a well-conditioned problem of ~170 unknowns; the code
evaluates it from a modal decomposition, the reference by a direct solve); the
threaded and sequential runs are compared bit for bit (the claim tested: where an
item runs does not change a bit).
"""

from __future__ import annotations

import math
import socket

import numpy as np
import pytest

from parasite.errors import ParasiteError
from parasite.network.reduce import frequency_grid, full_port_impedance, mesh_form
from parasite.schedule import ENV, connected, run_map


def _grid(n: int = 14, seed: int = 1):
    """An n x n grid of nodes joined by branches, four ports at the corners, a random
    symmetric positive definite L (H) and positive R (ohm): invented."""
    idx = np.arange(n * n).reshape(n, n)
    nf = np.concatenate([idx[:, :-1].ravel(), idx[:-1, :].ravel()])
    nt = np.concatenate([idx[:, 1:].ravel(), idx[1:, :].ravel()])
    rng = np.random.default_rng(seed)
    b = len(nf)
    A = rng.standard_normal((b, b)) * 1e-10
    L = A @ A.T / b + 5e-9 * np.eye(b)
    R = rng.uniform(1e-3, 5e-3, b)
    ports = [int(idx[0, 0]), int(idx[0, -1]), int(idx[-1, 0]), int(idx[-1, -1])]
    return mesh_form(nf, nt, n * n, ports, L, R)


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_full_impedance_matches_the_schur_complement() -> None:
    """Every point (from the modal decomposition of the mesh block) is the Schur
    complement at its own frequency, in the order of the frequencies."""
    form = _grid()
    P = form.T.shape[1]
    freqs = frequency_grid(1e9)[::5]
    Z = full_port_impedance(form, freqs)
    W = np.hstack([form.T, form.C.toarray()])
    for k, f in enumerate(freqs):
        M = W.T @ ((np.diag(form.R) + 2j * math.pi * f * form.L) @ W)
        ref = M[:P, :P] - M[:P, P:] @ np.linalg.solve(M[P:, P:], M[P:, :P])
        assert np.allclose(Z[k], ref, rtol=1e-12, atol=1e-12 * np.abs(ref).max())


def _solve(k: int) -> np.ndarray:
    rng = np.random.default_rng(k)
    a = rng.standard_normal((200, 200)) + 200 * np.eye(200)
    return np.linalg.solve(a, rng.standard_normal(200))


def test_threads_give_the_same_bytes_in_order() -> None:
    """run_map on a thread per core: the same bytes, in the same order, as one item
    after the other."""
    seq = run_map(_solve, range(8), scheduler="")
    par = run_map(_solve, range(8), scheduler="", threads=True)
    assert [x.tobytes() for x in seq] == [x.tobytes() for x in par]
    assert len({x.tobytes() for x in seq}) == 8


def test_connected_in_process_overrides_the_environment(monkeypatch: pytest.MonkeyPatch) -> None:
    """connected('') runs in process although $PARASITE_SCHEDULER names an address
    where nothing listens; outside the block the variable is read again."""
    monkeypatch.setenv(ENV, f"tcp://127.0.0.1:{_free_port()}")
    with connected("") as client:
        assert client is None
        assert run_map(abs, [-1, -2]) == [1, 2]
    with pytest.raises(ParasiteError, match="cannot reach the Dask scheduler"):
        run_map(abs, [-1])
    with pytest.raises(ParasiteError, match="cannot reach the Dask scheduler"), connected():
        pass
