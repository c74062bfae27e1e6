"""Which eigen backend runs a request, and why; refusal when neither fits in memory.

"direct" is shift-invert Lanczos on a sparse factorisation (femcav.eigen.shift_invert): the
only choice for modes near a target, and the fastest while the factor is small. "iterative"
is LOBPCG with the auxiliary-space multigrid preconditioner (femcav.eigen.lobpcg and
femcav.eigen.hx): lowest modes only, memory and time close to linear in the DOFs.
"distributed" is shift-invert with SLEPc and MUMPS over MPI processes (femcav.eigen.distributed);
only when asked for, since it needs mpiexec and the PETSc environment.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError
from .interface import EigenRequest
from ..memory_room import available_bytes, format_bytes, share_note
from .memory import direct_peak_bytes, iterative_peak_bytes

METHODS = ("auto", "direct", "iterative", "distributed")
# With "auto", the lowest modes of problems this large go to the iterative backend when the
# factorisation is SuperLU; with PARDISO only when its factor would not fit. Measured (box,
# order 1, 10 modes, one thread; benchmarks/scale.py): at 50k / 200k / 1M DOFs LOBPCG + HX
# took 5.7 / 29.7 / 236 s, SuperLU shift-invert 5.7 / 52.7 s, PARDISO shift-invert
# 2.6 / 17.8 / 224 s (8.7 GB at 1M against 6.1 GB iterative).
ITERATIVE_FROM_DOFS = {"superlu": 100_000, "pardiso": None}
# Leave this share of the free memory to everything else.
MEMORY_SHARE = 0.85
# Orders the iterative method handles; "auto" sends only order 1 there (at order 3 the point
# smoother is weak: 88 LOBPCG iterations at 3.4k DOFs).
ITERATIVE_ORDERS = (1, 2, 3)
AUTO_ITERATIVE_ORDERS = (1, 2)


@dataclass(frozen=True)
class Choice:
    method: str          # "direct" or "iterative"
    reason: str
    peak_bytes: float    # estimated
    free_bytes: float

    def describe(self) -> str:
        return (f"eigen method {self.method}: {self.reason}; estimated peak "
                f"{format_bytes(self.peak_bytes)} of {format_bytes(self.free_bytes)} free")


def choose(method: str, *, n: int, nnz: int, request: EigenRequest, order: int, library: str,
           free_bytes: float | None = None, hermitian: bool = True) -> Choice:
    """The backend for a pencil of ``n`` DOFs: "direct" or "iterative" for a Hermitian one,
    "arnoldi" for a complex-symmetric one (``hermitian`` False: losses inside the solve)."""
    if method not in METHODS:
        raise InputError(f"must be one of {', '.join(map(repr, METHODS))}, got {method!r}",
                         option="method")
    free = available_bytes() if free_bytes is None else free_bytes
    budget = MEMORY_SHARE * free
    block = request.count + max(4, request.count // 2)
    direct = direct_peak_bytes(n, nnz, 2 * block + 1, library)
    iterative = iterative_peak_bytes(n, nnz, block)
    iterative_possible = (hermitian and request.target is None
                          and order in AUTO_ITERATIVE_ORDERS)
    threshold = ITERATIVE_FROM_DOFS[library]

    if not hermitian:
        if method == "distributed":
            raise InputError("the distributed method solves lossless (Hermitian) problems; "
                             "with losses inside the solve or an absorbing layer use "
                             "method = \"direct\" (or \"auto\")", option="method")
        if method == "iterative":
            raise InputError("the iterative method needs a lossless (Hermitian) problem; with "
                             "losses inside the solve use method = \"direct\" (or \"auto\")",
                             option="method")
        # complex values: twice the real factorisation and vectors
        choice = Choice("arnoldi", "complex-symmetric pencil (losses inside the solve): "
                        "shift-invert Arnoldi", 2 * direct, free)
    elif method == "iterative":
        if request.target is not None:
            raise InputError("the iterative method finds the lowest modes only; for modes near "
                             "a frequency use method = \"direct\" (or \"auto\")",
                             option="method")
        if order not in ITERATIVE_ORDERS:
            raise InputError(f"the iterative method supports element order "
                             f"{', '.join(map(str, ITERATIVE_ORDERS))}; got order {order}",
                             option="method")
        choice = Choice("iterative", "asked for", iterative, free)
    elif method == "direct":
        choice = Choice("direct", "asked for", direct, free)
    elif method == "distributed":
        # MUMPS spreads the factor over the processes (and says itself when it runs out);
        # the estimate is the whole factor's, over all processes
        return Choice("distributed", "asked for, shift-invert over MPI processes", direct, free)
    elif not iterative_possible:
        why = ("modes near a target need shift-invert" if request.target is not None
               else f"the iterative method does not support order {order}")
        choice = Choice("direct", why, direct, free)
    elif direct > budget:
        choice = Choice("iterative", f"the factorisation would need about "
                        f"{format_bytes(direct)}", iterative, free)
    elif threshold is not None and n >= threshold:
        choice = Choice("iterative", f"{n} DOFs >= {threshold} with {library}", iterative, free)
    else:
        choice = Choice("direct", f"{n} DOFs, the factorisation fits" if threshold is None
                        else f"{n} DOFs < {threshold} with {library}", direct, free)

    if choice.peak_bytes > budget:
        hint = (" or method = \"iterative\"" if choice.method == "direct" and iterative_possible
                and iterative <= budget else "")
        raise InputError(f"the {choice.method} solve of {n} DOFs needs about "
                         f"{format_bytes(choice.peak_bytes)} (estimated) but only "
                         f"{format_bytes(free)} are free{share_note()}; use a coarser mesh, "
                         f"symmetry planes{hint}", field="solve")
    return choice
