"""Materials per region: relative permittivity (constant or a function of position) and
relative permeability (constant)."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Union

import numpy as np

from .errors import InputError
from .schema import REGION, check_range

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
        """Refuse eps_r, mu_r or tan_delta outside their ranges (femcav.schema) or not
        finite; ``points`` is (n, 3), where an eps_r expression is evaluated."""
        for name in ("tan_delta", "mu_r"):
            check_range(getattr(self, name), REGION.keys[name], f"{field}.{name}")
        check_permittivity(self.eps_at(points[:, 0], points[:, 1], points[:, 2]), points.T,
                           field=f"{field}.eps_r")


def check_permittivity(eps: np.ndarray, coordinates, *, field: str) -> None:
    """Refuse eps_r values (an expression's, at mesh nodes or quadrature points) outside the
    range of schema.REGION's eps_r or not finite; ``coordinates``: x, y, z arrays like eps."""
    rng = REGION.keys["eps_r"].range
    eps = np.asarray(eps, dtype=float)
    with np.errstate(invalid="ignore"):
        bad = ~(np.isfinite(eps) & (eps >= rng.low) & (eps <= rng.high))
    if np.any(bad):
        first = int(np.argmax(bad.reshape(-1)))
        x, y, z = (float(np.asarray(c, dtype=float).reshape(-1)[first]) for c in coordinates)
        raise InputError(
            f"eps_r must be {rng.describe()} everywhere in the region; it is "
            f"{eps.reshape(-1)[first]:g} at (x, y, z) = ({x:g}, {y:g}, {z:g}) m", field=field)


VACUUM = Material()


def tan_delta_by_cell(materials: dict[str, Material], region_names: dict[str, int],
                      cell_region: np.ndarray, like: np.ndarray) -> np.ndarray:
    """tan δ of each cell's material, broadcast like ``like`` (cells first, e.g. the
    quadrature-point arrays of a space)."""
    out = np.zeros_like(like, dtype=float)
    for name, rid in region_names.items():
        out[cell_region == rid] = materials[name].tan_delta
    return out
