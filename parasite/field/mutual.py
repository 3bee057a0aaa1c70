"""Mutual inductance between loops from their segment currents.

Each loop's current division over the segments (complex phasors per 1 A of
loop current, as the loop solver finds it by nodal analysis at the loop's own
frequency; real in the low-frequency limit) is a vector ``i_a`` (N,). With the
partial inductance matrix ``L`` (N x N, H, symmetric, images included):

    M_ab = Re(i_a^H L i_b)                                   (H)

the same quadratic form as a loop's own inductance ``L_a = Re(i_a^H L i_a)``
(the loop solver's value), so ``M_aa = L_a``, ``M_ab = M_ba`` and, ``L``
being positive definite, ``|k| = |M_ab| / sqrt(L_a L_b) <= 1``
(Cauchy-Schwarz). ``Im(i_a^H L i_b)`` is returned as ``quadrature``: it is 0
when both divisions are in phase (every tree of copper, the low-frequency
limit), and its size says how much the two loops' different frequencies
matter. For the voltage induced at one frequency, reciprocity gives the
mutual impedance ``Z_ba = i_b^T (R + j omega L) i_a`` (transpose, not
conjugate: the reciprocity theorem of linear networks, common practice; exact
when both divisions are solved on the same copper at that frequency), see
:func:`mutual_impedance`; with real divisions ``Im(Z_ba) / omega = M_ab``.

Pick-up: an aggressor loop ``a`` whose current changes at ``di/dt`` (A/s)
induces ``v = M_ab di/dt`` (V) across the open victim loop ``b``, positive
where the victim's own loop current would enter its copper (the copper's
voltage drop taken along the victim's path).

Split of ``M_ab``: *shared copper* is the part of the form on the segments
that both loops carry (both |i| above a tolerance): the partial self and
mutual inductances of the common copper (common-impedance coupling, e.g. the
common-source inductance of a gate loop and a power loop); *flux coupling* is
the rest (mutual partial inductances between distinct pieces). They add up
to ``M_ab``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from parasite.errors import ParasiteError

CARRY_TOLERANCE = 1e-9
"""A segment carries a loop's current when |i| > this fraction of the loop's largest |i|."""


@dataclass(frozen=True)
class LoopCoupling:
    mutual: float  # H, Re(i_a^H L i_b)
    quadrature: float  # H, Im(i_a^H L i_b)
    k: float  # M / sqrt(L_a L_b), NaN when either is 0
    self_a: float  # H
    self_b: float  # H
    shared: float  # H, terms on copper both loops carry
    flux: float  # H, the rest; shared + flux = mutual


@dataclass(frozen=True)
class CouplingMatrix:
    """Every loop pair at once: (n, n) arrays; diagonals are the loops' own
    inductances (``mutual``) and 1 (``k``)."""

    mutual: np.ndarray  # H
    quadrature: np.ndarray  # H
    k: np.ndarray
    shared: np.ndarray  # H
    flux: np.ndarray  # H


def _check(L: np.ndarray, currents: np.ndarray) -> None:
    n = L.shape[0]
    if L.ndim != 2 or L.shape != (n, n):
        raise ParasiteError(f"inductance matrix must be square, got shape {L.shape}")
    if currents.ndim != 2 or currents.shape[1] != n:
        raise ParasiteError(
            f"loop currents have shape {currents.shape}, expected (loops, {n}) for {n} segments")


def carried(currents: np.ndarray, tolerance: float = CARRY_TOLERANCE) -> np.ndarray:
    """Boolean (loops, N): which segments carry each loop's current."""
    mag = np.abs(np.atleast_2d(currents))
    if mag.shape[1] == 0:  # no copper
        return np.zeros(mag.shape, dtype=bool)
    top = mag.max(axis=1, keepdims=True)
    return mag > tolerance * np.where(top > 0, top, 1.0)


def _real_product(L: np.ndarray, V: np.ndarray) -> np.ndarray:
    """``L @ V`` for real ``L`` (N, N) and complex ``V`` (N, m) as one real product
    (no complex copy of L)."""
    if not np.iscomplexobj(V):
        return L @ V
    m = V.shape[1]
    P = L @ np.hstack([V.real, V.imag])
    return P[:, :m] + 1j * P[:, m:]


def _form(G: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mutual (H), quadrature (H) and coupling coefficient of the loops' form
    ``G_ab = i_a^H L i_b`` (nan where a loop has no inductance)."""
    mutual, quad = G.real.copy(), G.imag.copy()
    diag = np.diag(mutual)
    scale = np.sqrt(np.outer(diag, diag))
    with np.errstate(divide="ignore", invalid="ignore"):
        k = np.where(scale > 0, mutual / np.where(scale > 0, scale, 1.0), np.nan)
    return mutual, quad, k


def coupling_matrix(L: np.ndarray, currents: np.ndarray,
                    tolerance: float = CARRY_TOLERANCE) -> CouplingMatrix:
    """Mutual inductance, k and the shared/flux split for every pair of loops.

    ``L`` (N, N) H; ``currents`` (n, N) per 1 A of each loop's current. Cost:
    one product ``L @ currents^T`` (N^2 n); the shared part of a pair is the
    form on its shared segments, gathered when they are few, else one more
    column of a second product (more than N / 8 shared) (``(conj(i_a) . c_b)^T L (i_b . c_a)`` with
    ``c`` the masks of carried segments), so at most N^2 n (n + 1) / 2 more."""
    L = np.asarray(L, dtype=float)
    C = np.atleast_2d(np.asarray(currents))
    _check(L, C)
    n_seg = L.shape[0]
    G = np.conj(C) @ _real_product(L, C.T)  # (n, n): G_ab = i_a^H L i_b
    mutual, quad, k = _form(G)
    diag = np.diag(mutual)
    carry = carried(C, tolerance)
    both = carry.astype(np.int64) @ carry.T.astype(np.int64)
    shared = np.zeros_like(mutual)
    wide: list[tuple[int, int]] = []
    for a, b in zip(*np.nonzero(both), strict=True):
        if b <= a:  # a loop with itself: all its copper is shared
            continue
        idx = np.flatnonzero(carry[a] & carry[b])
        if 64 * len(idx) ** 2 > n_seg * n_seg:
            wide.append((int(a), int(b)))
            continue
        v = np.conj(C[a, idx]) @ L[np.ix_(idx, idx)] @ C[b, idx]
        shared[a, b] = shared[b, a] = float(np.real(v))
    shared[np.diag_indices_from(shared)] = diag
    if wide:
        U = np.array([np.conj(C[a]) * carry[b] for a, b in wide])
        V = np.array([C[b] * carry[a] for a, b in wide]).T
        vals = np.einsum("ij,ji->i", U, _real_product(L, V)).real
        for (a, b), v in zip(wide, vals, strict=True):
            shared[a, b] = shared[b, a] = float(v)
    return CouplingMatrix(mutual=mutual, quadrature=quad, k=k, shared=shared, flux=mutual - shared)


def coupling_matrix_operator(op: Any, currents: np.ndarray,
                             tolerance: float = CARRY_TOLERANCE) -> CouplingMatrix:
    """:func:`coupling_matrix` with ``L`` as an operator (``op.matvec``, e.g.
    :class:`parasite.extract.operator.FastInductance`): one product per loop for
    the form, and one per pair of loops sharing copper for its shared part
    (``(conj(i_a) . c_b)^T L (i_b . c_a)``, the products restricted to the masks)."""
    C = np.atleast_2d(np.asarray(currents))
    n_seg = op.shape[0]
    if C.shape[1] != n_seg:
        raise ParasiteError(
            f"loop currents have shape {C.shape}, expected (loops, {n_seg}) for {n_seg} segments")
    LC = np.asarray(op.matvec(C.T))  # (N, n)
    G = np.conj(C) @ LC
    mutual, quad, k = _form(G)
    diag = np.diag(mutual)
    carry = carried(C, tolerance)
    shared = np.zeros_like(mutual)
    for a in range(C.shape[0]):
        for b in range(a + 1, C.shape[0]):
            if not np.any(carry[a] & carry[b]):
                continue
            v = np.sum(np.conj(C[a]) * carry[b] * np.asarray(op.matvec(C[b] * carry[a])))
            shared[a, b] = shared[b, a] = float(np.real(v))
    shared[np.diag_indices_from(shared)] = diag
    return CouplingMatrix(mutual=mutual, quadrature=quad, k=k, shared=shared, flux=mutual - shared)


def loop_coupling(L: np.ndarray, i_a: np.ndarray, i_b: np.ndarray,
                  tolerance: float = CARRY_TOLERANCE) -> LoopCoupling:
    """The coupling of two loops (module docstring) from their current
    divisions ``i_a``, ``i_b`` (N,) per 1 A and ``L`` (N, N) H."""
    m = coupling_matrix(L, np.vstack([i_a, i_b]), tolerance)
    return LoopCoupling(mutual=float(m.mutual[0, 1]), quadrature=float(m.quadrature[0, 1]),
                        k=float(m.k[0, 1]), self_a=float(m.mutual[0, 0]),
                        self_b=float(m.mutual[1, 1]), shared=float(m.shared[0, 1]),
                        flux=float(m.flux[0, 1]))


def mutual_impedance(L: np.ndarray, R: np.ndarray, i_victim: np.ndarray, i_aggressor: np.ndarray,
                     frequency: float) -> complex:
    """Open-circuit voltage (V) across the victim loop per 1 A of aggressor
    loop current at ``frequency`` (Hz): ``i_v^T (diag(R) + j omega L) i_a``
    (reciprocity; module docstring). ``R`` (N,) ohm."""
    L = np.asarray(L, dtype=float)
    R = np.asarray(R, dtype=float)
    iv, ia = np.asarray(i_victim), np.asarray(i_aggressor)
    omega = 2.0 * math.pi * frequency
    return complex(iv @ (R * ia) + 1j * omega * (iv @ (L @ ia)))


def induced_voltage(mutual: float | np.ndarray, didt: float | np.ndarray) -> float | np.ndarray:
    """v = M di/dt (V) for a mutual ``mutual`` (H) and an aggressor current
    slope ``didt`` (A/s) (Faraday's law for two coupled circuits)."""
    return np.multiply(mutual, didt)
