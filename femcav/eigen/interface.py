"""What every eigen backend takes and returns."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


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
