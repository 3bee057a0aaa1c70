"""Independent reference formulas for the tests, written from the published
sources and never taken from the code under test.

All lengths in metres, inductances in henries.
"""

from __future__ import annotations

import math

MU0 = 4e-7 * math.pi  # H/m; exact enough: CODATA 2018 gives 1.25663706212e-6 (rel. diff 5.5e-10)


def gmd_rectangle(width: float, thickness: float) -> float:
    """Geometric mean distance of a rectangle from itself, ~0.2235 (w + t).

    Rosa, "The self and mutual inductances of linear conductors", Bull. Bureau
    of Standards 4 (1908); Grover, *Inductance Calculations* (1946), ch. 3,
    Table 1: the ratio lies between 0.2232 and 0.2237 for every aspect ratio.
    """
    return 0.2235 * (width + thickness)


def mutual_parallel_filaments(length: float, distance: float) -> float:
    """Mutual inductance of two equal, parallel, aligned filaments.

    Grover (1946), ch. 5, eq. (1) (Neumann's formula integrated):
    M = mu0/(2 pi) [ l asinh(l/d) - sqrt(l^2 + d^2) + d ].
    """
    l, d = length, distance
    return MU0 / (2 * math.pi) * (l * math.asinh(l / d) - math.hypot(l, d) + d)


def self_straight_gmd(length: float, gmd: float) -> float:
    """Partial self inductance of a straight conductor from its GMD: the mutual
    inductance of two filaments at distance GMD (Grover 1946, ch. 5, the GMD
    method; error well below 1% for l >> GMD)."""
    return mutual_parallel_filaments(length, gmd)


def rectangle_loop(a: float, b: float, gmd: float) -> float:
    """Inductance of a rectangular loop with sides a, b of a conductor of
    self-GMD ``gmd``: Grover (1946), ch. 16, rectangle formula,
    L = mu0/pi [a ln(2a/g) + b ln(2b/g) + 2 d - a asinh(a/b) - b asinh(b/a) - 2 (a + b)],
    d = sqrt(a^2 + b^2) (thin conductor, a, b >> g)."""
    d = math.hypot(a, b)
    return MU0 / math.pi * (
        a * math.log(2 * a / gmd) + b * math.log(2 * b / gmd) + 2 * d
        - a * math.asinh(a / b) - b * math.asinh(b / a) - 2 * (a + b)
    )


def mutual_parallel_spans(a1: float, a2: float, b1: float, b2: float, distance: float) -> float:
    """Mutual inductance of two parallel filaments, one spanning [a1, a2] and the
    other [b1, b2] along a common axis direction, ``distance`` apart.

    Neumann's formula integrated in closed form (Grover 1946, ch. 5, unequal
    filaments with offset): with G(u) = u asinh(u/d) - sqrt(u^2 + d^2),
    M = mu0/(4 pi) [G(a2 - b1) + G(a1 - b2) - G(a1 - b1) - G(a2 - b2)].
    Both filaments are oriented toward increasing coordinate.
    """
    d = distance

    def g(u: float) -> float:
        return u * math.asinh(u / d) - math.hypot(u, d)

    return MU0 / (4 * math.pi) * (g(a2 - b1) + g(a1 - b2) - g(a1 - b1) - g(a2 - b2))


def mutual_coplanar_polygons(p: list[tuple[float, float]], q: list[tuple[float, float]]) -> float:
    """Mutual inductance of two closed coplanar filament polygons whose sides are
    all parallel to x or y (Neumann's formula; perpendicular sides give 0):
    :func:`mutual_coplanar_paths` with each polygon closed on its first point."""
    return mutual_coplanar_paths([p + p[:1]], [q + q[:1]])


def mutual_coplanar_paths(paths_a: list[list[tuple[float, float]]],
                          paths_b: list[list[tuple[float, float]]]) -> float:
    """Like :func:`mutual_coplanar_polygons` for open polylines (cut loops):
    Neumann's formula summed over every pair of parallel pieces of the two
    sets of paths, each piece oriented in its path's order."""
    def pieces(paths: list[list[tuple[float, float]]]) -> list[list[tuple[float, float]]]:
        return [[p[i], p[i + 1]] for p in paths for i in range(len(p) - 1)]

    total = 0.0
    for pa in pieces(paths_a):
        for pb in pieces(paths_b):
            total += _piece_mutual(pa[0], pa[1], pb[0], pb[1])
    return total


def _piece_mutual(p0: tuple[float, float], p1: tuple[float, float],
                  q0: tuple[float, float], q1: tuple[float, float]) -> float:
    """Neumann's formula for two pieces along x or y: ``mutual_parallel_spans``
    with the sign of their directions when parallel, 0 when perpendicular."""
    for axis in (0, 1):
        other = 1 - axis
        if p0[other] != p1[other] or q0[other] != q1[other]:
            continue
        if p0[axis] == p1[axis] or q0[axis] == q1[axis]:
            continue
        d = abs(p0[other] - q0[other])
        sp = 1.0 if p1[axis] > p0[axis] else -1.0
        sq = 1.0 if q1[axis] > q0[axis] else -1.0
        a1, a2 = sorted((p0[axis], p1[axis]))
        b1, b2 = sorted((q0[axis], q1[axis]))
        return sp * sq * mutual_parallel_spans(a1, a2, b1, b2, d)
    return 0.0
