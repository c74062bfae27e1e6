"""Sparse direct factorisations behind one small contract.

A factoriser is a function ``factorize(A) -> solve`` where ``solve(b)`` returns A⁻¹ b for a
vector or a block of column vectors. SuperLU (from scipy) always works; faster libraries can
be registered in :data:`FACTORIZERS` and picked by name.
"""

from __future__ import annotations

from typing import Callable

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

Solve = Callable[[np.ndarray], np.ndarray]
SMALL = 200   # below this many unknowns, no reordering


def nested_dissection(A) -> np.ndarray:
    """A fill-reducing permutation of the symmetric matrix A (METIS nested dissection).

    Small matrices keep their order: nothing to gain, and METIS stops the process with a
    floating-point exception on an empty graph."""
    import pymetis

    if A.shape[0] < SMALL:
        return np.arange(A.shape[0])

    graph = sp.csr_matrix(A, copy=True)
    graph.setdiag(0)
    graph.eliminate_zeros()
    graph.sort_indices()
    adjacency = pymetis.CSRAdjacency(adj_starts=graph.indptr, adjacent=graph.indices)
    perm, _ = pymetis.nested_dissection(adjacency=adjacency)
    return np.asarray(perm, dtype=np.int64)


def superlu(A) -> Solve:
    """SuperLU on a symmetrically permuted matrix.

    Measured on a 34k-DOF curl-curl matrix (one core): COLAMD column ordering 18.1 s,
    MMD on AᵀA+A in symmetric mode 6.4 s, METIS nested dissection applied symmetrically with
    SuperLU in symmetric mode 2.5 s (plus 0.8 s for the ordering). The diagonal pivot threshold
    keeps some pivoting for the indefinite matrices of a shift inside the spectrum.
    """
    perm = nested_dissection(A)
    lu = splu(sp.csc_matrix(A)[perm][:, perm].tocsc(), permc_spec="NATURAL",
              diag_pivot_thresh=0.1, options={"SymmetricMode": True})

    def solve(b: np.ndarray) -> np.ndarray:
        out = np.empty_like(b, dtype=np.result_type(b, lu.L.dtype))
        out[perm] = lu.solve(np.ascontiguousarray(b[perm]))
        return out

    return solve


FACTORIZERS: dict[str, Callable[..., Solve]] = {"superlu": superlu}


def get_factorizer(name: str) -> Callable[..., Solve]:
    try:
        return FACTORIZERS[name]
    except KeyError:
        raise ValueError(f"unknown factorisation {name!r}; known: {', '.join(FACTORIZERS)}") from None
