"""What every eigen backend takes and returns."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

# An eigenvalue below this fraction of the lowest-mode scale (π/L)²/(ε_max μ_max) is a static
# field, not a resonance: on domains with holes or floating conductors a few curl-free
# fields are not gradients of a potential that vanishes on the walls, so deflation keeps them.
STATIC_FRACTION = 1e-6


@dataclass(frozen=True)
class EigenRequest:
    """``count`` modes: the lowest ones, or the ones nearest ``target`` (k0², 1/m²)."""

    count: int
    target: float | None = None


@dataclass(frozen=True)
class EigenStats:
    """What a backend reports of its run (fields it does not use stay None), and what the
    driver adds: the sparse direct library, the backend's name, the estimated peak memory
    and the lowest-mode scale (k0², 1/m²) the shifts were set from."""

    requested: int | None = None           # eigenpairs asked of the iteration
    shift: float | None = None             # k0² of a shift-invert, 1/m²
    factor_seconds: float | None = None
    iteration_seconds: float | None = None
    operator_applications: int | None = None
    # LOBPCG
    iterations: int | None = None
    converged: bool | None = None
    block_size: int | None = None
    preconditioner_setup_seconds: float | None = None
    largest_residual: float | None = None
    second_orthogonalization_passes: int | None = None
    residual_history: tuple[float, ...] | None = None
    tolerance: float | None = None
    # the distributed backends (SLEPc over MPI processes)
    processes: int | None = None
    eigensolver: str | None = None          # e.g. "SLEPc Krylov-Schur, shift-invert, MUMPS"
    restarts: int | None = None
    preconditioner_applications: int | None = None
    gradient_factor_seconds: float | None = None
    # added by the driver (a backend that brings its own solver library names it here)
    method: str | None = None
    factorization: str | None = None
    peak_estimate_bytes: float | None = None
    lowest_scale: float | None = None

    @property
    def steps(self) -> int | None:
        """Iterations of LOBPCG, or operator applications of a Krylov method."""
        return self.iterations if self.iterations is not None else self.operator_applications


@dataclass(frozen=True)
class EigenPairs:
    """Eigenvalues k0² (ascending) and M-normalised vectors (n_dofs, n_modes)."""

    values: np.ndarray
    vectors: np.ndarray
    stats: EigenStats = field(default_factory=EigenStats)
