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
class EigenPairs:
    """Eigenvalues k0² (ascending) and M-normalised vectors (n_dofs, n_modes)."""

    values: np.ndarray
    vectors: np.ndarray
    stats: dict = field(default_factory=dict)
