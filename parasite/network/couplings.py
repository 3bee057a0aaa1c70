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
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
import scipy.linalg
import scipy.sparse as sp

from parasite.errors import ExtractionError

if TYPE_CHECKING:
    from geometry.model import CopperGraph
    from parasite.network.branches import Branch

K_DIGITS = 10


def format_k(k: float) -> str:
    """A coupling coefficient as written in the netlist (11 significant digits)."""
    return f"{k:.{K_DIGITS}e}"


_P10 = np.array([10.0 ** n for n in range(23)])  # powers of ten exact in float64


def round_written(x: np.ndarray, digits: int = K_DIGITS) -> np.ndarray:
    """``float(f"{v:.{digits}e}")`` of every element (a number as written and read
    back), vectorised. The mantissa ``a 10^n`` is formed in one rounded product
    (error below 1e-5 of a unit for ``digits <= 10``) and rounded to an integer;
    the value is that integer times or over an exact power of ten, one correctly
    rounded operation, as the string's conversion is (IEEE 754). Elements near a
    rounding tie, or whose power of ten is not exact, are formatted by Python."""
    shape = np.shape(x)
    x = np.asarray(x, dtype=float).ravel()
    out = np.empty_like(x)
    a = np.abs(x)
    ok = np.isfinite(x) & (a > 0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        n = digits - np.floor(np.log10(np.where(ok, a, 1.0))).astype(np.int64)
        ok &= np.abs(n) <= 22
        p10 = _P10[np.clip(np.abs(n), 0, 22)]
        p = np.where(n >= 0, a * p10, a / p10)
        m = np.rint(p)
        ok &= (np.abs(p - np.floor(p) - 0.5) > 1e-4) & (m >= 10.0 ** digits) & (m < 10.0 ** (digits + 1))
        val = np.where(n >= 0, m / p10, m * p10)
    out[ok] = np.copysign(val[ok], x[ok])
    rest = np.flatnonzero(~ok)
    if len(rest):
        out[rest] = [float(f"{v:.{digits}e}") for v in x[rest].tolist()]
    return out.reshape(shape)


def _round_k(k: np.ndarray) -> np.ndarray:
    return round_written(k)


def _round_l(x: np.ndarray) -> np.ndarray:
    return round_written(x)


def smallest_eigenvalue(L: np.ndarray) -> float:
    """Smallest eigenvalue (H) of a symmetric matrix."""
    if L.shape[0] == 0:
        return float("inf")
    return float(scipy.linalg.eigvalsh(L, subset_by_index=[0, 0])[0])


def below(L: np.ndarray, bound: float) -> bool:
    """Whether the smallest eigenvalue of the symmetric ``L`` is below ``bound``
    (H): ``L - bound I`` has no Cholesky factor (O(N^3 / 3), no eigenvalues)."""
    if L.shape[0] == 0:
        return False
    if not math.isfinite(bound):
        return bound > 0
    try:
        scipy.linalg.cholesky(L - bound * np.eye(L.shape[0]), lower=True, check_finite=False)
    except np.linalg.LinAlgError:
        return True
    return False


def lowest_eigenvalue(L: np.ndarray) -> float:
    """Smallest eigenvalue (H) of a symmetric matrix, by Lanczos iteration on
    ``L^{-1}`` (one Cholesky factor; ARPACK through scipy, from a fixed start so
    that runs repeat); the dense solver when ``L`` is small or not definite (then
    the value is <= 0 and goes into an error message)."""
    n = L.shape[0]
    if n < 400:
        return smallest_eigenvalue(L)
    try:
        c = scipy.linalg.cho_factor(L, lower=True, check_finite=False)
    except np.linalg.LinAlgError:
        return smallest_eigenvalue(L)
    from scipy.sparse.linalg import LinearOperator, eigsh

    op = LinearOperator((n, n), matvec=lambda v: scipy.linalg.cho_solve(c, v), dtype=float)
    mu = eigsh(op, k=1, which="LA", v0=np.ones(n), tol=1e-12, return_eigenvectors=False)
    return float(1.0 / mu[0])


@dataclass(frozen=True)
class CouplingSelection:
    i: np.ndarray  # kept pairs, i < j, sorted by (i, j)
    j: np.ndarray
    k: np.ndarray  # coefficients as written (rounded)
    self_inductance: np.ndarray  # diagonal as written (H)
    method: str  # "threshold" or "threshold + diagonal compensation"
    note: str  # what the method changed, for the report
    dropped: int  # pairs with a non-zero mutual term that are not written
    kept: int
    lam: float | None = field(default=None, repr=False, compare=False)  # cache, see below

    @property
    def min_eigenvalue(self) -> float:
        """Smallest eigenvalue (H) of the matrix exactly as written (computed on
        first use: only the selection that is written needs it)."""
        if self.lam is None:
            object.__setattr__(self, "lam", smallest_eigenvalue(
                written_matrix(self.self_inductance, self.i, self.j, self.k)))
        assert self.lam is not None
        return float(self.lam)


def coupling_blocks(L: np.ndarray, rows: int = 2048) -> Iterator[tuple[int, np.ndarray]]:
    """``(r0, k)`` over row blocks of the coupling coefficients
    ``k_ij = L_ij / sqrt(L_ii L_jj)`` (rows ``r0`` to ``r0 + len(k)``, all columns;
    the diagonal is 1): no second N x N array is made."""
    n = L.shape[0]
    d = np.sqrt(np.diag(L))
    for r0 in range(0, n, rows):
        r1 = min(n, r0 + rows)
        yield r0, L[r0:r1] / (d[r0:r1, None] * d[None, :])


def written_matrix(self_l: np.ndarray, i: np.ndarray, j: np.ndarray, k: np.ndarray) -> np.ndarray:
    """The inductance matrix that the written L and K cards describe."""
    Lw = np.diag(self_l.astype(float))
    d = np.sqrt(self_l)
    m = k * d[i] * d[j]
    Lw[i, j] = m
    Lw[j, i] = m
    return Lw


def choose_couplings(L: np.ndarray, min_coupling: float, *, margin: float = 1e-3,
                     lam_full: float | None = None) -> CouplingSelection:
    """Keep couplings with |k| >= ``min_coupling``; guarantee a positive
    definite written matrix (see the module docstring). ``lam_full``: the
    smallest eigenvalue of ``L`` if known (a threshold search asks for several
    thresholds of one matrix). The written matrix is compared with ``margin``
    times it by a Cholesky factorisation; its own smallest eigenvalue is computed
    when first asked for (:attr:`CouplingSelection.min_eigenvalue`)."""
    n = L.shape[0]
    L = 0.5 * (L + L.T)
    diag = np.diag(L).copy()
    if n and (not np.all(np.isfinite(L)) or np.any(diag <= 0)):
        raise ExtractionError("the inductance matrix has a non-positive or non-finite self term")
    if lam_full is None:
        lam_full = lowest_eigenvalue(L) if n else float("inf")
    if n and lam_full <= 0:
        raise ExtractionError(
            f"the extracted inductance matrix is not positive definite (smallest eigenvalue "
            f"{lam_full:.3e} H): overlapping copper of one net? check the warnings")
    d = np.sqrt(diag)
    iu, ju = np.triu_indices(n, 1)
    kv = L[iu, ju] / (d[iu] * d[ju])
    keep = (np.abs(kv) >= min_coupling) & (kv != 0.0)
    nonzero = kv != 0.0
    i, j, k = iu[keep], ju[keep], _round_k(kv[keep])
    self_l = _round_l(diag)
    Lw = written_matrix(self_l, i, j, k)
    lam = None
    method, note = "threshold", ""
    if n and below(Lw, margin * lam_full):
        lam0 = smallest_eigenvalue(Lw)
        dropped = ~keep & nonzero
        add = np.zeros(n)
        np.add.at(add, iu[dropped], np.abs(L[iu[dropped], ju[dropped]]))
        np.add.at(add, ju[dropped], np.abs(L[iu[dropped], ju[dropped]]))
        new_diag = _round_l(diag + add)
        d2 = np.sqrt(new_diag)
        k = _round_k(L[i, j] / (d2[i] * d2[j]))
        lam = smallest_eigenvalue(written_matrix(new_diag, i, j, k))
        method = "threshold + diagonal compensation"
        note = (f"pruning at |k| < {min_coupling:g} left the smallest eigenvalue at {lam0:.3e} H; "
                f"dropped mutual terms added to the self terms (Gershgorin), raising them by at most "
                f"{100 * float(np.max(add / diag)):.2f}%")
        self_l = new_diag
        if lam <= 0:  # cannot happen in exact arithmetic; rounding only
            raise ExtractionError(f"could not make the written inductance matrix positive definite "
                                  f"(smallest eigenvalue {lam:.3e} H)")
    return CouplingSelection(i=i, j=j, k=k, self_inductance=self_l, method=method, note=note,
                             dropped=int(np.count_nonzero(~keep & nonzero)),
                             kept=int(keep.sum()), lam=lam)


def lead_branches(graph: CopperGraph, branches: Sequence[Branch]) -> np.ndarray:
    """Boolean mask of the branches made of probe-lead segments."""
    return np.array([graph.segments[b.segments[0]].kind == "probe" for b in branches],
                    dtype=bool)


def select_couplings(Lb: np.ndarray, min_coupling: float, leads: np.ndarray,
                     margin: float = 1e-3, lams: dict[str, float] | None = None) -> CouplingSelection:
    """Couplings to write: those of the circuit's branches chosen by
    :func:`choose_couplings` (threshold, diagonal
    compensation where needed), plus every non-zero coupling of a probe-lead
    branch (``leads`` True) with any other branch, written exactly.

    The written matrix stays positive definite: when the threshold alone
    leaves the circuit block with ``Lw >= L`` not guaranteed and the combined
    matrix's smallest eigenvalue falls below ``margin`` times the full
    matrix's, the circuit block is compensated on its diagonal (then
    ``Lw_cc >= L_cc``, so the Schur complement of the leads is at least that
    of the exact matrix, which is positive). ``lams``: a dict in which the
    smallest eigenvalues of ``Lb`` and of its circuit block are kept between
    calls for several thresholds."""
    lams = {} if lams is None else lams
    leads = np.asarray(leads, dtype=bool)
    if not leads.any():
        if "circuit" not in lams:
            lams["circuit"] = lowest_eigenvalue(0.5 * (Lb + Lb.T)) if Lb.shape[0] else math.inf
        return choose_couplings(Lb, min_coupling, margin=margin, lam_full=lams["circuit"])
    Lb = 0.5 * (Lb + Lb.T)
    circ = np.flatnonzero(~leads)
    if "all" not in lams:
        lams["all"] = lowest_eigenvalue(Lb)
    lam_full = lams["all"]
    if lam_full <= 0:
        raise ExtractionError(
            f"the extracted inductance matrix with the probe leads is not positive definite "
            f"(smallest eigenvalue {lam_full:.3e} H): does a lead run through copper?")

    def combine(sub: CouplingSelection) -> CouplingSelection:
        n = Lb.shape[0]
        self_l = _round_l(np.diag(Lb))
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
        n_lead = int(np.count_nonzero(lead_pair))
        return CouplingSelection(
            i=i, j=j, k=k, self_inductance=self_l, method=sub.method,
            note=(sub.note + ("; " if sub.note else "")
                  + f"{n_lead} couplings of probe leads written whatever their |k|"),
            dropped=sub.dropped, kept=sub.kept + n_lead)

    def written_of(sel: CouplingSelection) -> np.ndarray:
        return written_matrix(sel.self_inductance, sel.i, sel.j, sel.k)

    Lcc = Lb[np.ix_(circ, circ)]
    if "circuit" not in lams:
        lams["circuit"] = lowest_eigenvalue(Lcc) if len(circ) else math.inf
    out = combine(choose_couplings(Lcc, min_coupling, margin=margin, lam_full=lams["circuit"]))
    if below(written_of(out), margin * lam_full):
        out = combine(choose_couplings(Lcc, min_coupling, margin=math.inf,
                                       lam_full=lams["circuit"]))
    if below(written_of(out), 0.0):
        raise ExtractionError(
            f"could not write a positive definite inductance matrix with the probe leads "
            f"(smallest eigenvalue {out.min_eigenvalue:.3e} H)")
    return out


def near_field_couplings(near: sp.spmatrix, diag: np.ndarray, k_min: float
                         ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """``(i, j, mutual H, k)`` arrays of the pairs ``i < j`` stored in a sparse near
    field with ``|k| >= k_min``, ``k = M_ij / sqrt(L_ii L_jj)`` (``diag`` in H), in row
    order."""
    coo = sp.triu(near, k=1).tocoo()
    d = np.sqrt(diag)
    k = coo.data / (d[coo.row] * d[coo.col])
    keep = np.abs(k) >= k_min
    rows, cols, m, k = coo.row[keep], coo.col[keep], coo.data[keep], k[keep]
    order = np.lexsort((cols, rows))
    return rows[order], cols[order], m[order], k[order]
