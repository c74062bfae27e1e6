"""One eigen solve per class, and the one selection over the union of classes.

A class is one independent pencil of a problem: the whole 3D part, one azimuthal order of a
body of revolution, (later) one phase of a periodic cell. Each is solved by the backend that
suits it (femcav.eigen.selection: shift-invert Lanczos or LOBPCG for Hermitian pencils,
shift-invert Arnoldi for complex-symmetric ones), static fields are dropped, and then the
``count`` lowest (or nearest) modes of the union are kept and checked. The discretisation
turns the kept pairs into modes (its own fields, losses and classes).
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from functools import partial

import numpy as np

from .eigen import backends, selection
from .eigen.factorization import describe, get_factorizer, library
from .eigen.interface import STATIC_FRACTION, EigenRequest, EigenStats
from .eigen.pardiso import TooLarge
from .eigen.problem import EigenProblem
from .errors import InputError
from .memory_room import format_bytes
from .post.checks import ModeChecks, check_modes
from .progress import SILENT, Progress


@dataclass(frozen=True)
class ClassPencil:
    """K x = k0² M x of one class over its kept DOFs, with its kernel basis G, the rough
    lower bound of its spectrum (1/m²), its element order (for the backend choice) and, for
    the iterative backend, the nodal transfer τ -> AuxiliarySpace."""

    K: object
    M: object
    G: object
    lowest_scale: float
    order: int
    hermitian: bool = True
    auxiliary: object = None


@dataclass(frozen=True)
class ClassPairs:
    """The non-static eigenpairs of one class (k0² ascending by real part) and what their
    checks need."""

    values: np.ndarray
    vectors: np.ndarray
    stats: EigenStats
    static_dropped: int
    pencil: ClassPencil
    projector: object

    def checks(self, columns) -> list[ModeChecks]:
        columns = list(columns)
        if not columns:
            return []
        p = self.pencil
        return check_modes(p.K, p.M, self.projector, self.values[columns],
                           self.vectors[:, columns], hermitian=p.hermitian)


def solve_class(pencil: ClassPencil, *, count: int, target: float | None,
                method: str = "auto", factorization: str = "auto",
                progress: Progress = SILENT) -> ClassPairs:
    """The ``count`` lowest pairs of ``pencil`` (or those nearest the k0² ``target``)."""
    K = pencil.K
    request = EigenRequest(count=count, target=target)
    choice = selection.choose(method, n=K.shape[0], nnz=K.nnz, request=request,
                              order=pencil.order, library=library(factorization),
                              hermitian=pencil.hermitian)
    progress.step(choice.describe())
    factorize = partial(get_factorizer(factorization),
                        memory_limit=int(selection.MEMORY_SHARE * choice.free_bytes))
    if choice.method != "distributed":    # that backend brings its own (MUMPS over MPI)
        progress.step(f"sparse direct solves: {describe(factorization)}")
    problem = EigenProblem(K, pencil.M, pencil.G, lowest_scale=pencil.lowest_scale,
                           hermitian=pencil.hermitian, auxiliary=pencil.auxiliary)
    try:
        setting = backends.setting_for(problem, factorize, progress)
        pairs = backends.solve(choice.method, problem, request, setting)
    except TooLarge as error:
        raise InputError(f"the factorisation of {K.shape[0]} DOFs needs "
                         f"{format_bytes(error.needed)} but only {format_bytes(error.limit)} "
                         "can be spared; use a coarser mesh or symmetry planes",
                         field="solve") from None
    stats = replace(pairs.stats, method=choice.method,
                    factorization=pairs.stats.factorization or describe(factorization),
                    peak_estimate_bytes=choice.peak_bytes,   # sizes a sweep's --jobs
                    lowest_scale=pencil.lowest_scale)
    # a static field's k0² is (near) zero; a complex one (an open problem's layer mode) may
    # have a negative real part and is no static field, so it is judged by its modulus
    size = np.abs(pairs.values) if np.iscomplexobj(pairs.values) else pairs.values
    static = size < STATIC_FRACTION * pencil.lowest_scale
    return ClassPairs(values=pairs.values[~static], vectors=pairs.vectors[:, ~static],
                      stats=stats, static_dropped=int(static.sum()), pencil=pencil,
                      projector=setting.projector)


def select_modes(ascending: np.ndarray, count: int, target: float | None) -> np.ndarray:
    """Indices (ascending) of the ``count`` lowest values, or of those nearest ``target``
    (ties to the lower): the one mode selection of every solver path and of the merge of
    symmetry classes."""
    if target is None:
        return np.arange(min(count, ascending.size))
    return np.sort(np.argsort(np.abs(ascending - target), kind="stable")[:count])


@dataclass(frozen=True)
class Chosen:
    """One kept mode: its class, its eigenvalue k0² (real or complex), its vector over the
    class's kept DOFs and its checks."""

    key: object
    value: complex | float
    vector: np.ndarray
    checks: ModeChecks


def select_union(classes: dict, count: int, target: float | None) -> list[Chosen]:
    """The ``count`` lowest modes over every class (or those nearest the k0² ``target``), in
    ascending order, each checked within its class."""
    entries = sorted(((key, j) for key, pairs in classes.items()
                      for j in range(pairs.values.size)),
                     key=lambda e: classes[e[0]].values[e[1]].real)
    wavenumbers = np.sqrt(np.maximum([classes[k].values[j].real for k, j in entries], 0.0))
    keep = [entries[i] for i in select_modes(
        wavenumbers, count, None if target is None else float(np.sqrt(abs(target))))]
    checks = {}
    for key, pairs in classes.items():
        columns = [j for k, j in keep if k == key]
        checks.update({(key, j): c for j, c in zip(columns, pairs.checks(columns))})
    return [Chosen(key=k, value=classes[k].values[j], vector=classes[k].vectors[:, j],
                   checks=checks[(k, j)]) for k, j in keep]
