"""The "distributed" backend: SLEPc's Krylov-Schur with shift-and-invert through MUMPS,
on K and M spread over MPI processes (femcav.fem.distributed_assembly builds them).

The operator is the serial one (femcav.eigen.shift_invert): P (K - σM)⁻¹ M, P removing the
gradient part. SLEPc's shift-invert transformation forms K - σM and hands it to its KSP;
here that KSP is "preonly" with a Python preconditioner that solves with a MUMPS
factorisation and then applies P (femcav.eigen.distributed_projection), so SLEPc's
back-transformation λ = σ + 1/θ and its M-inner product (GHEP) stay its own. For the lowest
modes σ = -lowest_scale, where K - σM is positive definite (Cholesky); for modes near a
target σ is the target (LU). Vectors are M-normalised and their eigenvalues taken as
Rayleigh quotients, as in the serial code; the few vectors are then gathered on every
process (the driver's per-mode post-processing runs on each).

Options: PETSC_OPTIONS (PETSc's own environment variable) reaches every object here, e.g.
"-eps_tol 1e-12 -eps_ncv 60", "-femcav_shift_pc_factor_mat_solver_type superlu_dist",
"-eps_view" to print what ran.
"""

from __future__ import annotations

import time

import numpy as np

from .backends import SolveSetting, register
from .distributed_projection import factor_solver
from .interface import EigenPairs, EigenRequest
from .problem import EigenProblem

TOLERANCE = 1e-10            # SLEPc's relative residual; as ARPACK_TOLERANCE in shift_invert
MAX_RESTARTS = 1000
SHIFT_PREFIX = "femcav_shift_"


@register("distributed")
def _distributed(problem: EigenProblem, request: EigenRequest,
                 setting: SolveSetting) -> EigenPairs:
    if not hasattr(problem.K, "mat"):
        raise ValueError("the distributed backend takes matrices from "
                         "femcav.fem.distributed_assembly")
    return solve(problem.K, problem.M, setting.projector, request,
                 lowest_scale=problem.lowest_scale, progress=setting.progress)


class _ProjectedShiftSolve:
    """petsc4py's Python preconditioner: y = P (K - σM)⁻¹ x."""

    def __init__(self, stack, projector, definite: bool, progress):
        self.stack, self.projector, self.definite = stack, projector, definite
        self.progress = progress
        self.applications, self.factor_seconds, self._ksp = 0, 0.0, None

    def setUp(self, pc):
        if self._ksp is None:
            A, _ = pc.getOperators()
            t0 = time.perf_counter()
            self._ksp = factor_solver(self.stack, A, definite=self.definite,
                                      prefix=SHIFT_PREFIX)
            self.factor_seconds = time.perf_counter() - t0
            if self.progress:
                self.progress.step(f"MUMPS factorised K - σM ({A.getSize()[0]} DOFs, "
                                   f"{self.stack.size} processes) in "
                                   f"{self.factor_seconds:.2f} s")

    def view(self, pc, viewer):      # -eps_view shows the factorisation that ran
        if self._ksp is not None:
            self._ksp.view(viewer)

    def apply(self, pc, x, y):
        self.applications += 1
        self._ksp.solve(x, y)
        self.projector.remove_in_place(y)


def solve(K, M, projector, request: EigenRequest, *, lowest_scale: float,
          progress=None) -> EigenPairs:
    stack = K.stack
    SLEPc = stack.SLEPc
    n = K.shape[0]
    extra = max(4, request.count // 2)  # as the serial backend: clusters, static fields
    k = min(request.count + extra, n - 1)
    sigma = -lowest_scale if request.target is None else request.target

    eps = SLEPc.EPS().create(comm=stack.comm)
    eps.setOperators(K.mat, M.mat)
    eps.setProblemType(SLEPc.EPS.ProblemType.GHEP)
    eps.setType(SLEPc.EPS.Type.KRYLOVSCHUR)
    eps.setDimensions(nev=k, ncv=min(n, max(2 * k + 1, 20)))
    eps.setTarget(sigma)
    eps.setWhichEigenpairs(SLEPc.EPS.Which.TARGET_MAGNITUDE)
    eps.setTolerances(TOLERANCE, MAX_RESTARTS)
    st = eps.getST()
    st.setType(SLEPc.ST.Type.SINVERT)
    st.setShift(sigma)
    ksp = st.getKSP()
    ksp.setType("preonly")
    shift_solve = _ProjectedShiftSolve(stack, projector, request.target is None, progress)
    ksp.getPC().setType("python")
    ksp.getPC().setPythonContext(shift_solve)
    # the serial start vector, whatever the number of processes
    start = K.row_vectors.to_petsc(np.random.default_rng(12345).standard_normal(n))
    projector.remove_in_place(start)
    eps.setInitialSpace([start])
    eps.setFromOptions()

    t0 = time.perf_counter()
    eps.solve()
    seconds = time.perf_counter() - t0
    converged = eps.getConverged()
    if converged < min(k, request.count):
        raise RuntimeError(f"SLEPc converged {converged} of {k} eigenpairs in "
                           f"{eps.getIterationNumber()} restarts")

    values, vectors = [], []
    x, Kx = K.mat.createVecs()
    Mx = M.mat.createVecLeft()
    for i in range(min(converged, k)):
        eps.getEigenvector(i, x)
        M.mat.mult(x, Mx)
        x.scale(1.0 / np.sqrt(x.dot(Mx)))
        K.mat.mult(x, Kx)
        values.append(x.dot(Kx))       # the Rayleigh quotient
        vectors.append(K.row_vectors.to_global(x))
    values = np.array(values)
    order = np.argsort(values)
    return EigenPairs(values=values[order], vectors=np.column_stack(vectors)[:, order],
                      stats={"factor_seconds": shift_solve.factor_seconds,
                             "iteration_seconds": seconds - shift_solve.factor_seconds,
                             "operator_applications": shift_solve.applications,
                             "restarts": eps.getIterationNumber(), "shift": sigma,
                             "requested": k, "processes": stack.size,
                             "gradient_factor_seconds": projector.factor_seconds,
                             "eigensolver": "SLEPc Krylov-Schur, shift-invert, MUMPS"})
