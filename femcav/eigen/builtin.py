"""The built-in eigen backends, registered by name.

- "direct": shift-invert Lanczos (ARPACK) on a sparse factorisation, real symmetric or
  complex Hermitian pencils; lowest modes or those nearest a target.
- "iterative": LOBPCG with the auxiliary-space (Hiptmair-Xu) multigrid preconditioner;
  lowest modes only; needs the problem's ``auxiliary``.
- "arnoldi": shift-invert Arnoldi (ARPACK's non-symmetric driver) for complex-symmetric
  pencils (lossy or absorbing materials); complex eigenvalues and vectors.
"""

from __future__ import annotations

import time

from . import complex_shift_invert, hx, lobpcg, shift_invert
from .backends import SolveSetting, register
from .interface import EigenPairs, EigenRequest
from .problem import EigenProblem


@register("direct")
def _direct(problem: EigenProblem, request: EigenRequest, setting: SolveSetting) -> EigenPairs:
    return shift_invert.solve(problem.K, problem.M, setting.projector, request,
                              setting.factorize, lowest_scale=problem.lowest_scale,
                              progress=setting.progress)


@register("iterative")
def _iterative(problem: EigenProblem, request: EigenRequest,
               setting: SolveSetting) -> EigenPairs:
    if problem.auxiliary is None:
        raise ValueError("the iterative backend needs the problem's auxiliary space")
    shift = problem.lowest_scale
    t0 = time.perf_counter()
    preconditioner = hx.hx_preconditioner(problem.K + shift * problem.M, problem.kernel,
                                          problem.auxiliary(shift))
    preconditioner.setup_seconds = time.perf_counter() - t0   # with Π and the nodal matrix
    if setting.progress:
        setting.progress.step(f"multigrid preconditioner set up in "
                              f"{preconditioner.setup_seconds:.2f} s")
    return lobpcg.solve(problem.K, problem.M, setting.projector, request, preconditioner,
                        lowest_scale=shift, progress=setting.progress)


@register("arnoldi")
def _arnoldi(problem: EigenProblem, request: EigenRequest, setting: SolveSetting) -> EigenPairs:
    shift = -problem.lowest_scale if request.target is None else request.target
    return complex_shift_invert.solve(problem.K, problem.M, setting.projector,
                                      setting.factorize, shift=shift, count=request.count)
