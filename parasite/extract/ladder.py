"""A passive R-L ladder fitted to a branch's R(f) and L(f), and its SPICE cards.

The network is a series R0 and L0 followed by n sections, each a resistor R_k in
parallel with an inductor L_k (a Foster form)::

    Z(s) = R0 + s L0 + sum_k R_k s tau_k / (1 + s tau_k),     tau_k = L_k / R_k
    R(w) = R0 + sum_k R_k (w tau_k)^2 / (1 + (w tau_k)^2)
    L(w) = L0 + sum_k L_k / (1 + (w tau_k)^2)

so R rises from R0 (DC) to R0 + sum R_k and L falls from L0 + sum L_k to L0, as
the skin effect does. Every element is positive, so the network is passive by
construction (a network of positive R and L is). This is the Foster form of an R-L
driving-point impedance: every R-L one-port has it, with poles on the negative real
axis (E. A. Guillemin, *Synthesis of Passive Networks*, 1957, R-L and R-C one-ports;
cited from memory). R-L ladders as skin-effect models are an established technique
(e.g. C.-S. Yen, Z. Fazarinc, R. L. Wheeler, "Time-domain skin-effect model for
transient analysis of lossy transmission lines", Proc. IEEE 70(7), 1982; S. Kim and
D. P. Neikirk, "Compact equivalent circuit model for the skin effect", IEEE MTT-S
Int. Microwave Symp. Digest, 1996; both cited from memory, their topologies and
element ratios are not reproduced here). The fit: time constants fixed and
log-spaced over the band, R0, L0, R_k
by non-negative least squares on the relative errors of R and L (C. L. Lawson,
R. J. Hanson, *Solving Least Squares Problems*, 1974, ch. 23; scipy.optimize.nnls),
then all parameters refined together in logarithms (positive by construction) by
scipy.optimize.least_squares.

The external flux of the branch links all of its current, which flows through L0
only: L0 carries the couplings (K statements) to other branches; the sections
model the internal flux, which no other branch shares. (This placement is our
reasoning, not taken from a paper; it neglects the small frequency dependence of
the mutual inductances themselves.)
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy import optimize

from parasite.errors import ExtractionError

DEFAULT_BAND = (1e3, 1e9)
"""Default fit band, Hz."""


@dataclass(frozen=True)
class Ladder:
    """Fitted ladder: r0 (ohm), l0 (H, the coupling inductor), sections r (ohm) and l (H),
    and the fit's maximum relative errors of R and of L over the band."""
    r0: float
    l0: float
    r: np.ndarray
    l: np.ndarray
    band: tuple[float, float]
    max_error_r: float
    max_error_l: float

    def impedance(self, frequency: np.ndarray) -> np.ndarray:
        """Z(j 2 pi f) in ohm (module docstring)."""
        s = 2j * np.pi * np.asarray(frequency, dtype=float)[..., None]
        return self.r0 + s[..., 0] * self.l0 + np.sum(self.r * s * self.l / (self.r + s * self.l), axis=-1)


def _model(params: np.ndarray, w: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    params = np.clip(params, -100.0, 100.0)  # the refinement may wander; exp stays finite
    r0, l0 = np.exp(params[0]), np.exp(params[1])
    rk, tk = np.exp(params[2:2 + n]), np.exp(params[2 + n:])
    x2 = (w[:, None] * tk) ** 2
    return r0 + np.sum(rk * x2 / (1 + x2), axis=1), l0 + np.sum(rk * tk / (1 + x2), axis=1)


def fit_ladder(frequency: np.ndarray, resistance: np.ndarray, inductance: np.ndarray,
               stages: int = 4, band: tuple[float, float] = DEFAULT_BAND) -> Ladder:
    """Fit R(f) (ohm) and L(f) (H), sampled at ``frequency`` (Hz) covering ``band``, with a
    ladder of ``stages`` sections (1 to 8). Raises ExtractionError on unusable data."""
    f = np.asarray(frequency, dtype=float)
    r = np.asarray(resistance, dtype=float)
    ind = np.asarray(inductance, dtype=float)
    sel = (f >= band[0] * (1 - 1e-9)) & (f <= band[1] * (1 + 1e-9))
    if not 1 <= stages <= 8:
        raise ExtractionError(f"ladder stages must be 1 to 8, got {stages}", key="stages")
    if np.count_nonzero(sel) < 2 * stages + 2:
        raise ExtractionError(f"too few frequencies in the band {band} Hz to fit {stages} stages",
                              key="frequency")
    f, r, ind = f[sel], r[sel], ind[sel]
    if not (np.all(r > 0) and np.all(ind > 0) and np.all(np.isfinite(r)) and np.all(np.isfinite(ind))):
        raise ExtractionError("a ladder needs positive, finite R(f) and L(f)", key="resistance")
    w = 2 * np.pi * f
    tau = 1 / (2 * np.pi * np.geomspace(band[0], band[1], stages + 2)[1:-1])
    x2 = (w[:, None] * tau) ** 2
    # unknowns (R0, L0, R_k); rows scaled to relative errors
    a_r = np.hstack([np.ones((f.size, 1)), np.zeros((f.size, 1)), x2 / (1 + x2)]) / r[:, None]
    a_l = np.hstack([np.zeros((f.size, 1)), np.ones((f.size, 1)), tau / (1 + x2)]) / ind[:, None]
    col = np.concatenate([[r.max()], [ind.max()], np.full(stages, r.max())])
    x, _ = optimize.nnls(np.vstack([a_r, a_l]) / col, np.ones(2 * f.size))
    x = x / col
    floor = np.concatenate([[r.min()], [ind.min()], np.full(stages, r.min())]) * 1e-6
    p0 = np.log(np.concatenate([np.maximum(x, floor), tau]))

    def residual(p: np.ndarray) -> np.ndarray:
        rf, lf = _model(p, w, stages)
        return np.concatenate([rf / r - 1, lf / ind - 1])

    def jacobian(p: np.ndarray) -> np.ndarray:
        p = np.clip(p, -100.0, 100.0)
        rk, tk = np.exp(p[2:2 + stages]), np.exp(p[2 + stages:])
        x2 = (w[:, None] * tk) ** 2
        d = 1 + x2
        jr = np.hstack([np.full((w.size, 1), np.exp(p[0])), np.zeros((w.size, 1)),
                        rk * x2 / d, rk * 2 * x2 / d**2]) / r[:, None]
        jl = np.hstack([np.zeros((w.size, 1)), np.full((w.size, 1), np.exp(p[1])),
                        rk * tk / d, rk * tk * (1 - x2) / d**2]) / ind[:, None]
        return np.vstack([jr, jl])

    sol = optimize.least_squares(residual, p0, jac=jacobian, method="lm", x_scale=1.0)
    p = np.clip(sol.x if sol.cost < 0.5 * np.sum(residual(p0) ** 2) else p0, -100.0, 100.0)
    rf, lf = _model(p, w, stages)
    rk, tk = np.exp(p[2:2 + stages]), np.exp(p[2 + stages:])
    order = np.argsort(tk)
    return Ladder(float(np.exp(p[0])), float(np.exp(p[1])), rk[order], (rk * tk)[order],
                  (float(band[0]), float(band[1])), float(np.max(np.abs(rf / r - 1))),
                  float(np.max(np.abs(lf / ind - 1))))


def _value(x: float) -> str:
    return f"{x:.10e}"


def ladder_cards(ladder: Ladder, node_a: str, node_b: str,
                 new_name: Callable[[str], str]) -> tuple[list[str], str]:
    """SPICE cards of ``ladder`` between ``node_a`` and ``node_b``. ``new_name(kind)`` returns
    a fresh unique name for kind "R", "L" (element names, starting with that letter) or
    "node". Returns (cards, name of the coupling inductor L0). Order: a - L0 -
    (R1 || L1) - ... - R0 - b (as a branch's single L and R are written: the inductor at
    the ``from`` end, the series resistor at the ``to`` end; a device terminal on either
    end then meets the same element kind as without the ladder); the dot of L0 is on the
    node_a side (current a -> b positive)."""
    cards = []
    nodes = [node_a] + [new_name("node") for _ in range(len(ladder.r) + 1)] + [node_b]
    coupling = new_name("L")
    cards.append(f"{coupling} {nodes[0]} {nodes[1]} {_value(ladder.l0)}")
    for k, (rk, lk) in enumerate(zip(ladder.r, ladder.l, strict=True)):
        a, b = nodes[1 + k], nodes[2 + k]
        cards.append(f"{new_name('R')} {a} {b} {_value(rk)}")
        cards.append(f"{new_name('L')} {a} {b} {_value(lk)}")
    cards.append(f"{new_name('R')} {nodes[-2]} {nodes[-1]} {_value(ladder.r0)}")
    return cards, coupling
