"""Eigen backends behind one call: ``solve(name, problem, request, ...) -> EigenPairs``.

A backend is a function (problem, request, setting) -> EigenPairs registered under a name
with ``@register``; the driver picks the name (femcav.eigen.selection says which and why)
and never imports a backend module itself. A new backend (a distributed one, say) is one
module with one registration, imported in ``_load``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from .interface import EigenPairs, EigenRequest
from .problem import EigenProblem
from .projection import GradientProjector


@dataclass(frozen=True)
class SolveSetting:
    """What every backend may use besides the problem: the sparse direct solver
    (``factorize(A, definite=...) -> solve``), the kernel projector built from it, and
    where progress lines go."""

    factorize: Callable
    projector: GradientProjector
    progress: Any = None


Backend = Callable[[EigenProblem, EigenRequest, SolveSetting], EigenPairs]
_BACKENDS: dict[str, Backend] = {}


def register(name: str):
    def add(backend: Backend) -> Backend:
        if name in _BACKENDS:
            raise ValueError(f"an eigen backend named {name!r} is already registered")
        _BACKENDS[name] = backend
        return backend
    return add


def names() -> tuple[str, ...]:
    _load()
    return tuple(sorted(_BACKENDS))


def setting_for(problem: EigenProblem, factorize, progress=None) -> SolveSetting:
    # matrices spread over processes (eigen.distributed_matrix) bring their own projector
    own = getattr(problem.M, "gradient_projector", None)
    return SolveSetting(factorize=factorize, progress=progress,
                        projector=own(problem.kernel) if own else
                        GradientProjector(problem.M, problem.kernel, factorize,
                                          hermitian=problem.hermitian))


def solve(name: str, problem: EigenProblem, request: EigenRequest,
          setting: SolveSetting) -> EigenPairs:
    _load()
    if name not in _BACKENDS:
        raise ValueError(f"no eigen backend {name!r}; registered: {', '.join(names())}")
    return _BACKENDS[name](problem, request, setting)


def _load() -> None:
    """Import the modules that register the built-in backends (once)."""
    from . import builtin  # noqa: F401
    from . import distributed  # noqa: F401  (imports PETSc only when it runs)
