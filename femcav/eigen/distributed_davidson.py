"""The lowest modes without a factorisation of K - σM: SLEPc's generalized Davidson
preconditioned by hypre's auxiliary-space Maxwell solver (AMS), over MPI processes.

The preconditioner approximates (K + τM)⁻¹, τ the lowest-mode scale, as the serial
iterative backend does (femcav.eigen.hx, Hiptmair and Xu); AMS builds its nodal spaces from
the discrete gradient G and the vertex coordinates, so it serves first-order elements only.
Every preconditioned residual is projected off range(G) (y <- P AMS(x), P of
femcav.eigen.distributed_projection) and so is the start block, which keeps the search
space out of the gradient kernel as in femcav.eigen.lobpcg. Memory grows about linearly with
the DOFs (no factor of K - σM; only the small factor of GᵀMG). Generalized Davidson rather
than SLEPc's LOBPCG: on the box, LOBPCG's Rayleigh-Ritz Gram matrix lost definiteness
(LAPACK sygvd failed) or it ran out of iterations, where Davidson converged; its
preconditioner applications stayed near 900 for 15 pairs from 4k to 34k DOFs.

PETSc options: "-femcav_ams_pc_hypre_ams_..." tune AMS; "-eps_gd_..." the eigensolver.
"""

from __future__ import annotations

import time

import numpy as np

from .interface import EigenPairs, EigenRequest, EigenStats

TOLERANCE = 1e-9             # relative residual (checks' measure), as the serial LOBPCG
MAX_ITERATIONS = 2000
AMS_PREFIX = "femcav_ams_"


class _ProjectedAMS:
    """petsc4py's Python preconditioner: y = P AMS(K + τM) x."""

    def __init__(self, stack, projector, G, progress):
        self.stack, self.projector, self.G, self.progress = stack, projector, G, progress
        self.applications, self.setup_seconds, self._pc = 0, 0.0, None

    def setUp(self, pc):
        if self._pc is not None:
            return
        PETSc = self.stack.PETSc
        _, A = pc.getOperators()
        t0 = time.perf_counter()
        inner = PETSc.PC().create(comm=self.stack.comm)
        inner.setOptionsPrefix(AMS_PREFIX)
        inner.setOperators(A, A)
        inner.setType("hypre")
        inner.setHYPREType("ams")
        inner.setHYPREDiscreteGradient(self.G.mat)
        inner.setCoordinates(np.ascontiguousarray(self.G.column_points.T))
        inner.setFromOptions()
        inner.setUp()
        self._pc = inner
        self.setup_seconds = time.perf_counter() - t0
        if self.progress:
            self.progress.step(f"hypre AMS set up in {self.setup_seconds:.2f} s "
                               f"({self.stack.size} processes)")

    def view(self, pc, viewer):
        if self._pc is not None:
            self._pc.view(viewer)

    def apply(self, pc, x, y):
        self.applications += 1
        self._pc.apply(x, y)
        self.projector.remove_in_place(y)


def solve(K, M, G, projector, request: EigenRequest, *, lowest_scale: float,
          progress=None) -> EigenPairs:
    from .distributed import pencil_solver, projected_start, solved_pairs

    stack = K.stack
    PETSc, SLEPc = stack.PETSc, stack.SLEPc
    n = K.shape[0]
    k = min(request.count + max(4, request.count // 2), n - 1)
    shifted = K.mat.duplicate(copy=True)             # K + τM, the preconditioner's matrix
    shifted.axpy(lowest_scale, M.mat, structure=PETSc.Mat.Structure.SAME_NONZERO_PATTERN)

    preconditioner = _ProjectedAMS(stack, projector, G, progress)
    eps = pencil_solver(K, M, SLEPc.EPS.Type.GD, SLEPc.ST.Type.PRECOND, preconditioner)
    eps.getST().setPreconditionerMat(shifted)
    eps.setDimensions(nev=k)
    eps.setWhichEigenpairs(SLEPc.EPS.Which.SMALLEST_REAL)
    # SLEPc measures ||Kx - λMx|| / (|λ| ||x||), the checks ||Kx - λMx|| / (|λ| ||Mx||):
    # the ratio ||Mx|| / ||x|| is about M's mean diagonal (mesh-size dependent)
    eps.setTolerances(TOLERANCE * M.mat.getDiagonal().sum() / n, MAX_ITERATIONS)
    seconds, values, vectors = solved_pairs(eps, K, M, projected_start(K, projector, k), k,
                                            request.count)
    return EigenPairs(values=values, vectors=vectors,
                      stats=EigenStats(
                          preconditioner_setup_seconds=preconditioner.setup_seconds,
                          iteration_seconds=seconds - preconditioner.setup_seconds,
                          preconditioner_applications=preconditioner.applications,
                          iterations=eps.getIterationNumber(), shift=-lowest_scale,
                          requested=k, processes=stack.size,
                          gradient_factor_seconds=projector.factor_seconds,
                          eigensolver="SLEPc generalized Davidson, hypre AMS",
                          factorization=f"none of K - σM; MUMPS for GᵀMG over "
                                        f"{stack.size} MPI processes"))
