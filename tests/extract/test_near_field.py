"""The near field of the inductance operator, built block by block of rows
(parasite.extract.near_field): which pairs it stores, their values, and the same bytes
whichever way the blocks run.

References: the near rule written out in the test by brute force with numpy (every
pair's horizontal midpoint distance against the sum of the near radii of the
operator's docstring, ``near_scale max(3.5 l, l + section_ratio h)``), and the dense
matrix of parasite.extract.inductance_matrix (itself checked against published
formulas in test_extract_matrix.py and its neighbours). The distributed run uses a
real ``distributed.LocalCluster`` of two worker processes, never a mock.
"""

from __future__ import annotations

import numpy as np
import pytest

from benchmarks.bench_extract import generated_board
from parasite.extract import inductance_matrix
from parasite.extract.operator import (
    BOARD_NEAR_SCALE,
    BOARD_SECTION_RATIO,
    FastInductance,
    count_near_pairs,
)
from parasite.schedule import runs_here


def _brute_force_near(arrays, section_ratio: float, near_scale: float) -> np.ndarray:
    """(N, N) bool: horizontal midpoint distance below the sum of the near radii, i != j."""
    start, end = np.asarray(arrays.start), np.asarray(arrays.end)
    length = np.sqrt(np.sum((end - start) ** 2, axis=1))
    h = np.maximum(arrays.width, arrays.thickness)
    r = near_scale * np.maximum(3.5 * length, length + section_ratio * h)
    mid = 0.5 * (start + end)
    dist = np.hypot(mid[:, None, 0] - mid[None, :, 0], mid[:, None, 1] - mid[None, :, 1])
    near = dist < r[:, None] + r[None, :]
    np.fill_diagonal(near, False)
    return near


def _pattern(m) -> tuple[np.ndarray, np.ndarray]:
    rows = np.repeat(np.arange(m.shape[0]), np.diff(m.indptr))
    return rows, np.asarray(m.indices, dtype=np.int64)


@pytest.mark.parametrize("section_ratio, near_scale, plane", [
    (10.0, 1.0, True), (BOARD_SECTION_RATIO, BOARD_NEAR_SCALE, True), (10.0, 1.0, False)])
def test_stored_pairs_are_those_within_the_radii(section_ratio: float, near_scale: float,
                                                 plane: bool) -> None:
    """An invented board (benchmarks' generator: traces of 2-12 mm, vias, so the near
    radii differ): the stored off-diagonal entries are exactly the pairs of the
    brute-force rule, both triangles, every diagonal entry stored, columns ascending;
    the stored entries equal the dense matrix's to 1e-12 relative; the pair count of
    the memory estimate is the same number."""
    arrays = generated_board(1200, seed=3, plane=plane)
    n = len(arrays)
    op = FastInductance(arrays, section_ratio=section_ratio, near_scale=near_scale,
                        block_rows=257)
    near = op.near
    rows, cols = _pattern(near)
    got = np.zeros((n, n), dtype=bool)
    got[rows, cols] = True
    assert near.nnz == rows.size == int(got.sum())  # no pair stored twice
    assert got.diagonal().all()
    np.fill_diagonal(got, False)
    want = _brute_force_near(arrays, section_ratio, near_scale)
    assert want.sum() > 20 * n  # the rule keeps a real near field
    assert np.array_equal(got, want)
    assert near.has_sorted_indices
    assert op.pairs_near == int(want.sum())
    assert count_near_pairs(arrays, section_ratio, near_scale) == int(want.sum()) // 2
    L = inductance_matrix(arrays)
    np.testing.assert_allclose(near.data, L[rows, cols], rtol=1e-12, atol=0)
    # the correction shares the index arrays and differs from the near field only by
    # the far-field sum's own value (small against the entries)
    assert np.shares_memory(op._corr.indices, near.indices)
    assert np.shares_memory(op._corr.indptr, near.indptr)
    assert near.indices.dtype == np.int32
    # with the layer grids: the radii's floor adds pairs, counted by the same rule
    grid = FastInductance(arrays, section_ratio=section_ratio, near_scale=near_scale,
                          far_field="grid")
    assert grid.pairs_near >= op.pairs_near
    assert count_near_pairs(arrays, section_ratio, near_scale, "grid") \
        == grid.pairs_near // 2


def test_block_size_does_not_change_a_bit() -> None:
    """Blocks of 97 rows and one block of all rows: the same arrays, byte for byte."""
    arrays = generated_board(900, seed=11, plane=True)
    a = FastInductance(arrays, block_rows=97)
    b = FastInductance(arrays, block_rows=len(arrays))
    for x, y in ((a.near.indptr, b.near.indptr), (a.near.indices, b.near.indices),
                 (a.near.data, b.near.data), (a._corr.data, b._corr.data)):
        assert x.tobytes() == y.tobytes()


def test_progress_counts_the_rows() -> None:
    """In process, the progress callback sees every block's last row, ending at N."""
    arrays = generated_board(600, seed=5, plane=False)
    seen: list[tuple[int, int]] = []
    FastInductance(arrays, block_rows=200, progress=lambda d, t: seen.append((d, t)))
    assert seen == [(200, 600), (400, 600), (600, 600)]


def test_local_cluster_of_two_processes_is_byte_identical() -> None:
    """The blocks on a LocalCluster of two worker processes (by client and by
    address) give the same near field and correction, byte for byte, as in process."""
    distributed = pytest.importorskip("distributed")
    arrays = generated_board(1000, seed=2, plane=True)
    local = FastInductance(arrays, block_rows=150)
    assert runs_here(None)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        assert not runs_here(client)
        remote = FastInductance(arrays, block_rows=150, scheduler=client)
        by_address = FastInductance(arrays, block_rows=150, scheduler=cluster.scheduler_address)
        workers = set(client.has_what())
    assert len(workers) == 2
    for op in (remote, by_address):
        assert op.near.indptr.tobytes() == local.near.indptr.tobytes()
        assert op.near.indices.tobytes() == local.near.indices.tobytes()
        assert op.near.data.tobytes() == local.near.data.tobytes()
        assert op._corr.data.tobytes() == local._corr.data.tobytes()


def test_one_direction_one_vector_against_dense() -> None:
    """Parallel traces along x without a plane (one live density of the multipole
    call) and a single vector: the product within 1e-6 of the dense one."""
    import dataclasses

    arrays = generated_board(60, seed=4, plane=False)
    keep = np.flatnonzero((np.abs(arrays.end[:, 1] - arrays.start[:, 1]) < 1e-12)
                          & (np.abs(arrays.end[:, 2] - arrays.start[:, 2]) < 1e-12))
    assert keep.size >= 3
    sub = dataclasses.replace(arrays, **{f.name: getattr(arrays, f.name)[keep]
                                         for f in dataclasses.fields(arrays)})
    L = inductance_matrix(sub)
    x = np.linspace(1.0, 2.0, keep.size)
    y = FastInductance(sub).matvec(x)
    assert np.linalg.norm(y - L @ x) / np.linalg.norm(L @ x) < 1e-6
