"""The gradient projector of femcav.eigen.projection on matrices spread over processes.

x <- x - G (Gᵀ M G)⁻¹ Gᵀ M x, with Gᵀ M G formed by PETSc (PtAP, no process holds it whole)
and factorised once by MUMPS (Cholesky: it is symmetric positive definite on the free
potentials). A deflation space would need one vector per vertex, so the projection is
applied inside the shift-invert operator instead (femcav.eigen.distributed).
"""

from __future__ import annotations

import time

import numpy as np

from .distributed_matrix import DistributedMatrix

# the prefix of the PETSc options of this factorisation, e.g.
# PETSC_OPTIONS="-femcav_gradient_pc_factor_mat_solver_type superlu_dist"
OPTIONS_PREFIX = "femcav_gradient_"


class DistributedGradientProjector:
    def __init__(self, M: DistributedMatrix, G: DistributedMatrix):
        self.M, self.G = M, G
        PETSc = M.stack.PETSc
        self.empty = G.shape[1] == 0    # a mesh too coarse to have a free node
        self.factor_seconds = 0.0
        if self.empty:
            return
        t0 = time.perf_counter()
        self._GtMG = M.mat.PtAP(G.mat)
        self._GtMG.setOption(PETSc.Mat.Option.SPD, True)
        self._ksp = factor_solver(M.stack, self._GtMG, definite=True, prefix=OPTIONS_PREFIX)
        self._Mx = M.mat.createVecLeft()
        self._r, self._s = G.mat.createVecRight(), G.mat.createVecRight()
        self._gradient = M.mat.createVecLeft()
        self.factor_seconds = time.perf_counter() - t0

    def remove_in_place(self, x) -> None:
        """x <- its part M-orthogonal to range(G), x a PETSc vector."""
        if self.empty:
            return
        self.M.mat.mult(x, self._Mx)
        self.G.mat.multTranspose(self._Mx, self._r)
        self._ksp.solve(self._r, self._s)
        self.G.mat.mult(self._s, self._gradient)
        x.axpy(-1.0, self._gradient)

    # the GradientProjector interface on global NumPy columns (the per-mode checks)

    def remove(self, X: np.ndarray) -> np.ndarray:
        columns = X.reshape(X.shape[0], -1)
        vectors = self.M.row_vectors
        x = vectors.create()
        out = np.empty_like(columns, dtype=float)
        for j in range(columns.shape[1]):
            vectors.to_petsc(columns[:, j], x)
            self.remove_in_place(x)
            out[:, j] = vectors.to_global(x)
        return out.reshape(X.shape)

    def gradient_part(self, X: np.ndarray) -> np.ndarray:
        return X - self.remove(X)


def factor_solver(stack, A, *, definite: bool, prefix: str):
    """A KSP that solves with A by one MUMPS factorisation (Cholesky when A is definite),
    factorised here; PETSc options under ``prefix`` override the choices."""
    PETSc = stack.PETSc
    ksp = PETSc.KSP().create(comm=stack.comm)
    ksp.setOptionsPrefix(prefix)
    ksp.setOperators(A)
    ksp.setType("preonly")
    pc = ksp.getPC()
    pc.setType("cholesky" if definite else "lu")
    pc.setFactorSolverType("mumps")
    ksp.setFromOptions()
    ksp.setUp()
    return ksp
