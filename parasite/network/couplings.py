"""Which couplings to write, and a matrix that stays positive definite.

ngspice's run time grows steeply with the number of coupling statements (see
benchmarks/RESULTS.md), so only couplings with |k| >= a threshold are written.
Dropping terms can leave a matrix that is not positive definite (a circuit
that creates energy). The matrix exactly as it will be written (thresholded,
k rounded to the written digits) is checked by its smallest eigenvalue; when
it falls below ``margin`` times the smallest eigenvalue of the full matrix,
the dropped terms are compensated on the diagonal: every dropped mutual term
M_ij adds |M_ij| to L_ii and L_jj. The compensation matrix D - E (E the dropped
off-diagonal part, D its absolute row sums) is symmetric and diagonally
dominant with a non-negative diagonal, hence positive semidefinite
(Gershgorin's circle theorem: S. Gerschgorin, "Ueber die Abgrenzung der
Eigenwerte einer Matrix", Izv. Akad. Nauk SSSR 6, 1931), so the written
matrix L - E + D = L + (D - E) is at least as definite as L. This is the
conservative, passivity-preserving choice (it raises self inductances, so
loop inductances come out slightly high, never low).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import scipy.linalg

from parasite.errors import ExtractionError

if TYPE_CHECKING:
    from geometry.model import CopperGraph
    from parasite.network.branches import Branch

K_DIGITS = 10


def format_k(k: float) -> str:
    """A coupling coefficient as written in the netlist (11 significant digits)."""
    return f"{k:.{K_DIGITS}e}"


def _round_k(k: np.ndarray) -> np.ndarray:
    return np.array([float(format_k(x)) for x in k.tolist()])


def _round_l(x: np.ndarray) -> np.ndarray:
    return np.array([float(f"{v:.10e}") for v in x.tolist()])


def smallest_eigenvalue(L: np.ndarray) -> float:
    """Smallest eigenvalue (H) of a symmetric matrix."""
    if L.shape[0] == 0:
        return float("inf")
    return float(scipy.linalg.eigvalsh(L, subset_by_index=[0, 0])[0])


@dataclass(frozen=True)
class CouplingSelection:
    i: np.ndarray  # kept pairs, i < j, sorted by (i, j)
    j: np.ndarray
    k: np.ndarray  # coefficients as written (rounded)
    self_inductance: np.ndarray  # diagonal as written (H)
    method: str  # "threshold" or "threshold + diagonal compensation"
    note: str  # what the method changed, for the report
    min_eigenvalue: float  # H, of the matrix exactly as written
    dropped: int  # pairs with a non-zero mutual term that are not written
    kept: int


def written_matrix(self_l: np.ndarray, i: np.ndarray, j: np.ndarray, k: np.ndarray) -> np.ndarray:
    """The inductance matrix that the written L and K cards describe."""
    Lw = np.diag(self_l.astype(float))
    d = np.sqrt(self_l)
    m = k * d[i] * d[j]
    Lw[i, j] = m
    Lw[j, i] = m
    return Lw


def choose_couplings(L: np.ndarray, min_coupling: float, *, margin: float = 1e-3) -> CouplingSelection:
    """Keep couplings with |k| >= ``min_coupling``; guarantee a positive
    definite written matrix (see the module docstring)."""
    n = L.shape[0]
    L = 0.5 * (L + L.T)
    diag = np.diag(L).copy()
    if n and (not np.all(np.isfinite(L)) or np.any(diag <= 0)):
        raise ExtractionError("the inductance matrix has a non-positive or non-finite self term")
    lam_full = smallest_eigenvalue(L)
    if n and lam_full <= 0:
        raise ExtractionError(
            f"the extracted inductance matrix is not positive definite (smallest eigenvalue "
            f"{lam_full:.3e} H): overlapping copper of one net? check the warnings")
    d = np.sqrt(diag)
    K = L / np.outer(d, d)
    iu, ju = np.triu_indices(n, 1)
    kv = K[iu, ju]
    keep = (np.abs(kv) >= min_coupling) & (kv != 0.0)
    nonzero = kv != 0.0
    i, j, k = iu[keep], ju[keep], _round_k(kv[keep])
    self_l = _round_l(diag)
    lam = smallest_eigenvalue(written_matrix(self_l, i, j, k))
    method, note = "threshold", ""
    if n and lam < margin * lam_full:
        dropped = ~keep & nonzero
        add = np.zeros(n)
        np.add.at(add, iu[dropped], np.abs(L[iu[dropped], ju[dropped]]))
        np.add.at(add, ju[dropped], np.abs(L[iu[dropped], ju[dropped]]))
        new_diag = _round_l(diag + add)
        d2 = np.sqrt(new_diag)
        k = _round_k(L[i, j] / (d2[i] * d2[j]))
        lam2 = smallest_eigenvalue(written_matrix(new_diag, i, j, k))
        method = "threshold + diagonal compensation"
        note = (f"pruning at |k| < {min_coupling:g} left the smallest eigenvalue at {lam:.3e} H; "
                f"dropped mutual terms added to the self terms (Gershgorin), raising them by at most "
                f"{100 * float(np.max(add / diag)):.2f}%")
        self_l, lam = new_diag, lam2
        if lam <= 0:  # cannot happen in exact arithmetic; rounding only
            raise ExtractionError(f"could not make the written inductance matrix positive definite "
                                  f"(smallest eigenvalue {lam:.3e} H)")
    return CouplingSelection(i=i, j=j, k=k, self_inductance=self_l, method=method, note=note,
                             min_eigenvalue=lam, dropped=int(np.count_nonzero(~keep & nonzero)),
                             kept=int(keep.sum()))


def lead_branches(graph: CopperGraph, branches: Sequence[Branch]) -> np.ndarray:
    """Boolean mask of the branches made of probe-lead segments."""
    return np.array([graph.segments[b.segments[0]].kind == "probe" for b in branches],
                    dtype=bool)


def select_couplings(Lb: np.ndarray, min_coupling: float, leads: np.ndarray,
                     margin: float = 1e-3) -> CouplingSelection:
    """Couplings to write: those of the circuit's branches chosen by
    :func:`choose_couplings` (threshold, diagonal
    compensation where needed), plus every non-zero coupling of a probe-lead
    branch (``leads`` True) with any other branch, written exactly.

    The written matrix stays positive definite: when the threshold alone
    leaves the circuit block with ``Lw >= L`` not guaranteed and the combined
    matrix's smallest eigenvalue falls below ``margin`` times the full
    matrix's, the circuit block is compensated on its diagonal (then
    ``Lw_cc >= L_cc``, so the Schur complement of the leads is at least that
    of the exact matrix, which is positive)."""
    leads = np.asarray(leads, dtype=bool)
    if not leads.any():
        return choose_couplings(Lb, min_coupling, margin=margin)
    Lb = 0.5 * (Lb + Lb.T)
    circ = np.flatnonzero(~leads)
    lam_full = smallest_eigenvalue(Lb)
    if lam_full <= 0:
        raise ExtractionError(
            f"the extracted inductance matrix with the probe leads is not positive definite "
            f"(smallest eigenvalue {lam_full:.3e} H): does a lead run through copper?")

    def combine(sub: CouplingSelection) -> CouplingSelection:
        n = Lb.shape[0]
        self_l = np.array([float(f"{v:.10e}") for v in np.diag(Lb).tolist()])
        self_l[circ] = sub.self_inductance
        iu, ju = np.triu_indices(n, 1)
        lead_pair = (leads[iu] | leads[ju]) & (Lb[iu, ju] != 0.0)
        i = np.concatenate([circ[sub.i], iu[lead_pair]])
        j = np.concatenate([circ[sub.j], ju[lead_pair]])
        d = np.sqrt(self_l)
        k_lead = _round_k(Lb[iu[lead_pair], ju[lead_pair]] / (d[iu[lead_pair]] * d[ju[lead_pair]]))
        k = np.concatenate([sub.k, k_lead])
        order = np.lexsort((j, i))
        i, j, k = i[order], j[order], k[order]
        lam = smallest_eigenvalue(written_matrix(self_l, i, j, k))
        n_lead = int(np.count_nonzero(lead_pair))
        return CouplingSelection(
            i=i, j=j, k=k, self_inductance=self_l, method=sub.method,
            note=(sub.note + ("; " if sub.note else "")
                  + f"{n_lead} couplings of probe leads written whatever their |k|"),
            min_eigenvalue=lam, dropped=sub.dropped, kept=sub.kept + n_lead)

    Lcc = Lb[np.ix_(circ, circ)]
    out = combine(choose_couplings(Lcc, min_coupling, margin=margin))
    if out.min_eigenvalue < margin * lam_full:
        out = combine(choose_couplings(Lcc, min_coupling, margin=math.inf))
    if out.min_eigenvalue <= 0:
        raise ExtractionError(
            f"could not write a positive definite inductance matrix with the probe leads "
            f"(smallest eigenvalue {out.min_eigenvalue:.3e} H)")
    return out
