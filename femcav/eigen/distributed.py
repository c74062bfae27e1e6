"""The "distributed" backend: SLEPc's Krylov-Schur with shift-and-invert through MUMPS,
on K and M spread over MPI processes (femcav.fem.distributed_assembly builds them); or, with
the PETSc option "-femcav_eigensolver davidson", generalized Davidson with hypre's AMS
preconditioner for the lowest modes of first-order models (femcav.eigen.distributed_davidson).

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

from ..errors import InputError
from .backends import SolveSetting, register
from .distributed_projection import factor_solver
from .interface import EigenPairs, EigenRequest, EigenStats
from .problem import EigenProblem

TOLERANCE = 1e-10            # SLEPc's relative residual; as ARPACK_TOLERANCE in shift_invert
MAX_RESTARTS = 1000
SHIFT_PREFIX = "femcav_shift_"


EIGENSOLVERS = ("krylovschur", "davidson")    # -femcav_eigensolver; the first by default


@register("distributed")
def _distributed(problem: EigenProblem, request: EigenRequest,
                 setting: SolveSetting) -> EigenPairs:
    if not hasattr(problem.K, "mat"):
        raise ValueError("the distributed backend takes matrices from "
                         "femcav.fem.distributed_assembly")
    stack = problem.K.stack
    chosen = stack.PETSc.Options().getString("femcav_eigensolver", EIGENSOLVERS[0])
    if chosen not in EIGENSOLVERS:
        raise InputError(f"-femcav_eigensolver must be one of {', '.join(EIGENSOLVERS)}, got "
                         f"{chosen!r}", field="PETSC_OPTIONS")
    if chosen == "davidson":
        if request.target is not None or problem.kernel.column_points is None:
            raise InputError("-femcav_eigensolver davidson finds the lowest modes of order-1 "
                             "models only (hypre AMS); use krylovschur", field="PETSC_OPTIONS")
        from .distributed_davidson import solve as solve_davidson
        return solve_davidson(problem.K, problem.M, problem.kernel, setting.projector, request,
                            lowest_scale=problem.lowest_scale, progress=setting.progress)
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

    shift_solve = _ProjectedShiftSolve(stack, projector, request.target is None, progress)
    eps = pencil_solver(K, M, SLEPc.EPS.Type.KRYLOVSCHUR, SLEPc.ST.Type.SINVERT, shift_solve)
    eps.setDimensions(nev=k, ncv=min(n, max(2 * k + 1, 20)))
    eps.setTarget(sigma)
    eps.setWhichEigenpairs(SLEPc.EPS.Which.TARGET_MAGNITUDE)
    eps.setTolerances(TOLERANCE, MAX_RESTARTS)
    eps.getST().setShift(sigma)
    seconds, values, vectors = solved_pairs(eps, K, M, projected_start(K, projector, 1), k,
                                            request.count)
    return EigenPairs(values=values, vectors=vectors,
                      stats=EigenStats(
                          factor_seconds=shift_solve.factor_seconds,
                          iteration_seconds=seconds - shift_solve.factor_seconds,
                          operator_applications=shift_solve.applications,
                          restarts=eps.getIterationNumber(), shift=sigma, requested=k,
                          processes=stack.size,
                          gradient_factor_seconds=projector.factor_seconds,
                          eigensolver="SLEPc Krylov-Schur, shift-invert, MUMPS",
                          factorization=f"MUMPS over {stack.size} MPI processes"))


def pencil_solver(K, M, eps_type, st_type, preconditioner):
    """A SLEPc EPS for the pencil (K, M), symmetric-definite, whose spectral transformation
    solves with ``preconditioner`` alone (a petsc4py Python preconditioner object)."""
    SLEPc = K.stack.SLEPc
    eps = SLEPc.EPS().create(comm=K.stack.comm)
    eps.setOperators(K.mat, M.mat)
    eps.setProblemType(SLEPc.EPS.ProblemType.GHEP)
    eps.setType(eps_type)
    st = eps.getST()
    st.setType(st_type)
    ksp = st.getKSP()
    ksp.setType("preonly")
    ksp.getPC().setType("python")
    ksp.getPC().setPythonContext(preconditioner)
    return eps


def projected_start(K, projector, count: int) -> list:
    """``count`` random vectors without gradient part, the same whatever the processes."""
    rng = np.random.default_rng(12345)
    start = []
    for _ in range(count):
        vector = K.row_vectors.to_petsc(rng.standard_normal(K.shape[0]))
        projector.remove_in_place(vector)
        start.append(vector)
    return start


def solved_pairs(eps, K, M, start: list, wanted: int, needed: int):
    """Solve ``eps`` from ``start`` (PETSC_OPTIONS applied last) and return (seconds, the
    first ``wanted`` converged pairs, ascending: M-normalised, each value the Rayleigh
    quotient of its vector, the vectors gathered on every process). RuntimeError when fewer
    than ``needed`` converged."""
    eps.setInitialSpace(start)
    eps.setFromOptions()
    t0 = time.perf_counter()
    eps.solve()
    seconds = time.perf_counter() - t0
    converged = eps.getConverged()
    if converged < min(wanted, needed):
        raise RuntimeError(f"SLEPc converged {converged} of {wanted} eigenpairs in "
                           f"{eps.getIterationNumber()} iterations")
    values, vectors = [], []
    x, Kx = K.mat.createVecs()
    Mx = M.mat.createVecLeft()
    for i in range(min(converged, wanted)):
        eps.getEigenvector(i, x)
        M.mat.mult(x, Mx)
        x.scale(1.0 / np.sqrt(x.dot(Mx)))
        K.mat.mult(x, Kx)
        values.append(x.dot(Kx))
        vectors.append(K.row_vectors.to_global(x))
    order = np.argsort(values)
    return seconds, np.array(values)[order], np.column_stack(vectors)[:, order]
