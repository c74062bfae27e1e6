"""Materials per region: relative permittivity (constant or a function of position) and
relative permeability (constant)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Union

import numpy as np

from .errors import InputError

# A permittivity is a number or a vectorised callable f(x, y, z) of coordinates in metres.
Permittivity = Union[float, Callable[[np.ndarray, np.ndarray, np.ndarray], np.ndarray]]


@dataclass(frozen=True)
class Material:
    """eps_r (real part) and mu_r; ``tan_delta`` is the dielectric loss tangent, so that the
    complex permittivity is eps_r (1 - j tan_delta) with time dependence e^{jωt}."""

    eps_r: Permittivity = 1.0
    mu_r: float = 1.0
    tan_delta: float = 0.0

    @property
    def is_uniform(self) -> bool:
        return not callable(self.eps_r)

    def eps_at(self, x: np.ndarray, y: np.ndarray, z: np.ndarray) -> np.ndarray:
        """eps_r at the given points (arrays of one shape)."""
        if callable(self.eps_r):
            value = np.asarray(self.eps_r(x, y, z), dtype=float)
            return np.broadcast_to(value, np.shape(x))
        return np.full(np.shape(x), float(self.eps_r))

    def check(self, points: np.ndarray, *, field: str) -> None:
        """Refuse a non-positive or non-finite eps_r or mu_r; ``points`` is (n, 3)."""
        if not (np.isfinite(self.tan_delta) and self.tan_delta >= 0):
            raise InputError(f"tan_delta must be zero or positive, got {self.tan_delta!r}",
                             field=f"{field}.tan_delta")
        if not (np.isfinite(self.mu_r) and self.mu_r > 0):
            raise InputError(f"mu_r must be a positive number, got {self.mu_r!r}",
                             field=f"{field}.mu_r")
        eps = self.eps_at(points[:, 0], points[:, 1], points[:, 2])
        bad = ~np.isfinite(eps) | (eps <= 0)
        if np.any(bad):
            where = points[np.argmax(bad)]
            raise InputError(
                f"eps_r must be positive and finite everywhere in the region; it is "
                f"{eps[np.argmax(bad)]:g} at (x, y, z) = ({where[0]:g}, {where[1]:g}, "
                f"{where[2]:g}) m", field=f"{field}.eps_r")


VACUUM = Material()


def tan_delta_by_cell(materials: dict[str, Material], region_names: dict[str, int],
                      cell_region: np.ndarray, like: np.ndarray) -> np.ndarray:
    """tan δ of each cell's material, broadcast like ``like`` (cells first, e.g. the
    quadrature-point arrays of a space)."""
    out = np.zeros_like(like, dtype=float)
    for name, rid in region_names.items():
        out[cell_region == rid] = materials[name].tan_delta
    return out
