"""The projection that removes gradient (kernel) fields from a vector.

Split x into its kernel part G (GᴴMG)⁻¹ GᴴM x and the rest, G the kernel basis the
discretisation gives (the discrete gradient over the free DOFs). For a real or Hermitian
pencil the projection is M-orthogonal; for a complex-symmetric one (lossy or absorbing
materials) the same formula with Gᵀ is the projection that the bilinear form xᵀMy makes
orthogonal, which is what keeps the kernel out of a complex-symmetric iteration. With a
real G (every problem so far) the two coincide.
"""

from __future__ import annotations

import numpy as np


class GradientProjector:
    """``G`` and ``M`` are already restricted to the free DOFs and free nodes. ``factorize``
    takes a sparse matrix and returns a solve function (see femcav.eigen.factorization)."""

    def __init__(self, M, G, factorize, *, hermitian: bool = True):
        self.G = G.tocsr()
        Gt = self.G.conj().T if hermitian else self.G.T
        self._GtM = (Gt @ M).tocsr()   # one product per application instead of two
        # A mesh too coarse to have an interior node has no gradient fields to remove.
        self._solve = (factorize((self._GtM @ self.G).tocsc(), definite=not np.iscomplexobj(M))
                       if G.shape[1] else None)

    def gradient_part(self, x: np.ndarray) -> np.ndarray:
        if self._solve is None:
            return np.zeros_like(x)
        return self.G @ self._solve(self._GtM @ x)

    def remove(self, x: np.ndarray) -> np.ndarray:
        return x - self.gradient_part(x)
