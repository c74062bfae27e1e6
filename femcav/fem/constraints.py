"""Constraint operators: the DOFs a problem keeps, as a prolongation x_full = P x.

Essential walls (and symmetry cuts, which are walls of a kind) fix DOFs to zero; a periodic
cell will tie the DOFs of one face to those of the other with a phase. Both are one sparse
prolongation P (n_full x n, real or complex): the reduced pencil is Pᴴ K P, Pᴴ M P, a
reduced vector expands to the full field by P x, and R (the rows of the kept DOFs, R P = I)
takes full-space operators to the reduced space: the kernel basis R G Q of a scalar space with
its own constraint Q (the gradient of a constrained potential is a constrained field, so
P R G Q = G Q), or the nodal transfer R Π.

When nothing is linked (P only selects), reduce() drops rows and columns instead of forming
the triple product, and the assembly drops the entries of fixed DOFs before summation.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.sparse as sp


@dataclass(frozen=True)
class Constraint:
    n_full: int
    kept: np.ndarray                    # full index of each reduced DOF, ascending
    # dependent DOFs in terms of the reduced ones (n_full x n, nonzero only on rows not in
    # ``kept``): a dependent DOF d with P[d, j] = e^{-jφ} follows reduced DOF j; None: the
    # DOFs not kept are zero
    links: sp.csr_matrix | None = None

    @classmethod
    def keeping(cls, n_full: int, kept) -> "Constraint":
        """The DOFs ``kept`` survive; the others are zero (essential walls)."""
        return cls(n_full, np.unique(np.asarray(kept, dtype=np.int64)))

    @property
    def size(self) -> int:
        return int(self.kept.size)

    @property
    def selects_only(self) -> bool:
        return self.links is None

    @property
    def dtype(self) -> np.dtype:
        return np.dtype(float) if self.links is None else np.result_type(self.links.dtype, float)

    @cached_property
    def P(self) -> sp.csr_matrix:
        n = self.size
        select = sp.csr_matrix((np.ones(n), (self.kept, np.arange(n))),
                               shape=(self.n_full, n))
        return select if self.links is None else (select + self.links).tocsr()

    @cached_property
    def reduced_index(self) -> np.ndarray:
        """Full DOF -> its reduced index, -1 for a DOF that is not kept."""
        index = np.full(self.n_full, -1, dtype=np.int64)
        index[self.kept] = np.arange(self.size)
        return index

    def expand(self, x: np.ndarray) -> np.ndarray:
        """The full DOF vector(s) of reduced ``x`` (n,) or (n, k)."""
        if self.links is None:
            out = np.zeros((self.n_full,) + x.shape[1:], dtype=x.dtype)
            out[self.kept] = x
            return out
        return self.P @ x

    def reduce(self, A) -> sp.csr_matrix:
        """Pᴴ A P of a full-space operator."""
        A = sp.csr_matrix(A)
        if self.links is None:
            return A[self.kept][:, self.kept].tocsr()
        return (self.P.conj().T @ A @ self.P).tocsr()

    def restrict_rows(self, B) -> sp.csr_matrix:
        """R B: the rows of the kept DOFs of a full-space operator B (full x anything)."""
        return sp.csr_matrix(B)[self.kept]
