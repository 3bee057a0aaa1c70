"""The branch inductance ``S L S^T`` (H) of merged series chains, with ``L`` an operator.

:func:`parasite.network.branches.branch_matrices` forms the branch matrix from the dense
segment matrix; on the fast path (:class:`parasite.extract.operator.FastInductance`) the
same congruence is applied instead: ``(S L S^T) x = S (L (S^T x))``, one product of the
segment operator per product, with ``S`` the sparse (branches x segments) sign matrix of
the merge. The diagonal (each chain's own inductance, every pair of its segments) comes
from the dense block of each chain's segments.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from parasite.extract.operator import InductanceOperator
from parasite.network.branches import Branch, incidence_signs


class BranchOperator:
    """``S L S^T`` of the branches (module docstring); the interface of
    :class:`parasite.extract.operator.InductanceOperator`."""

    def __init__(self, op: InductanceOperator, branches: list[Branch]) -> None:
        self.op = op
        self.S = incidence_signs(branches, op.shape[0])
        self.St = self.S.T.tocsr()
        nb = len(branches)
        self.shape = (nb, nb)
        seg_diag = np.asarray(op.diagonal(), dtype=float)
        first = np.array([b.segments[0] for b in branches], dtype=np.int64)
        diag = seg_diag[first]  # a one-segment branch: its segment's self inductance
        for k, b in enumerate(branches):
            if len(b.segments) > 1:
                idx = np.asarray(b.segments, dtype=np.int64)
                s = np.asarray(b.signs, dtype=float)
                diag[k] = float(s @ op.block(idx, idx) @ s)
        self._diag = diag
        self._near: sp.csr_matrix | None = None

    def matvec(self, x: np.ndarray) -> np.ndarray:
        return np.asarray(self.S @ self.op.matvec(self.St @ np.asarray(x)))

    def diagonal(self) -> np.ndarray:
        return self._diag.copy()

    def block(self, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
        """The dense block ``(S L S^T)[rows][:, cols]`` from the segments' block."""
        Sr, Sc = self.S[np.asarray(rows)], self.S[np.asarray(cols)]
        sr, sc = np.unique(Sr.indices), np.unique(Sc.indices)
        inner = self.op.block(sr, sc)
        return np.asarray(Sr[:, sr] @ inner @ Sc[:, sc].T)

    @property
    def near(self) -> sp.csr_matrix:
        """``S N S^T`` of the operator's exact near field ``N`` (AttributeError when it
        has none, as :class:`parasite.extract.operator.SubOperator`)."""
        whole = getattr(self.op, "near", None)
        if whole is None:
            raise AttributeError("near")
        if self._near is None:
            self._near = (self.S @ whole @ self.St).tocsr()
        return self._near
