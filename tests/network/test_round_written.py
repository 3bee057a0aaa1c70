"""The vectorised rounding of written numbers against Python's own formatting.

Reference: Python's ``format(x, ".10e")`` and ``float(str)`` (correctly rounded
decimal conversion, IEEE 754-2008 clause 5.12), which is what the written cards
contain and what a simulator reads back. Tolerance: none (bit for bit), because
the netlist bytes must not depend on which path rounded a number.
"""

from __future__ import annotations

import numpy as np

from parasite.network.couplings import round_written


def _reference(x: np.ndarray) -> np.ndarray:
    return np.array([float(f"{v:.10e}") for v in x.ravel().tolist()]).reshape(x.shape)


def test_random_coefficients_and_inductances_bit_for_bit() -> None:
    rng = np.random.default_rng(7)
    x = np.concatenate([rng.uniform(-1, 1, 200_000), rng.uniform(1e-10, 1e-6, 100_000),
                        10.0 ** rng.uniform(-30, 25, 50_000) * rng.choice([-1, 1], 50_000)])
    assert np.array_equal(round_written(x).view(np.int64), _reference(x).view(np.int64))


def test_ties_zeros_and_matrix_shape() -> None:
    # decimal half-way cases (11th digit then 5), signed zero, powers of ten, a 2-D block
    x = np.array([[0.123456789015, -0.0, 0.0, 1.0], [1e-22, 1e23, 9.99999999995e-3, 2.5e-12]])
    out = round_written(x)
    assert out.shape == x.shape
    assert np.array_equal(out.view(np.int64), _reference(x).view(np.int64))
