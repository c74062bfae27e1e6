"""What the discretisation hands to the eigen layer: matrices, never meshes.

An ``EigenProblem`` is the pencil K x = λ M x on the free DOFs (after the constraints), the
kernel basis G whose range the iteration must avoid (the discrete gradient: every G p is an
eigenvector with λ = 0), a rough lower estimate of the first non-zero eigenvalue, and,
for the auxiliary-space preconditioner of the iterative backend, a way to get the nodal
transfer. The eigen layer reads nothing else, so a new discretisation (a section per
azimuthal order, a periodic cell) reaches every backend by filling in these fields.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp


@dataclass(frozen=True)
class AuxiliarySpace:
    """The nodal side of the Hiptmair-Xu preconditioner for A = K + τM, as matrices.

    ``interpolation`` Π maps nodal vector fields (3 n columns, component-major) to the free
    DOFs; ``points`` (3, n) are the coordinates of those n nodes (they span the near-null
    space of the nodal problem); ``nodal_matrix`` optionally replaces the Galerkin nodal
    problem Πᵀ A Π by a scalar SPD matrix applied per component (a vector Laplacian);
    ``smoothing_degree`` is the Chebyshev degree that suits the element order."""

    interpolation: sp.spmatrix
    points: np.ndarray
    nodal_matrix: sp.spmatrix | None = None
    smoothing_degree: int = 3


@dataclass(frozen=True)
class EigenProblem:
    K: sp.spmatrix
    M: sp.spmatrix
    kernel: sp.spmatrix                  # G: free DOFs x free scalar DOFs
    lowest_scale: float                  # ≈ lower bound of the first non-zero eigenvalue
    hermitian: bool = True               # False: complex symmetric (lossy or absorbing)
    # τ -> the nodal transfer for a preconditioner of K + τM (only the iterative backend
    # asks, so the discretisation builds Π only when it is needed)
    auxiliary: Callable[[float], AuxiliarySpace] | None = None

    @property
    def dtype(self) -> np.dtype:
        return np.result_type(self.K.dtype, self.M.dtype)

    @property
    def size(self) -> int:
        return self.K.shape[0]
