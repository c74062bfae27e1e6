"""The surface resistance R_s of a metal wall at a mode's frequency, however the case gives it.

Three ways: a normal metal by its conductivity (femcav.metals: R_s = sqrt(ωμ0/2σ), with the
optional roughness factor); a surface resistance given directly (the same at every
frequency: a measured value, or a coating the conductivity model does not describe); or a
superconducting metal at a temperature, R_s = R_BCS(f, T) + R_res (femcav.superconductors:
the BCS part grows like f², the residual part is as given).
"""

from __future__ import annotations

import math

from .metals import CONDUCTIVITY_S_PER_M, surface_resistance
from .superconductors import SUPERCONDUCTORS, bcs_resistance
from .walls import Wall

# every name a case may give as ``metal``
METAL_NAMES = (*CONDUCTIVITY_S_PER_M, *SUPERCONDUCTORS)
# other common spellings (lower case) of those names: the American spelling and the
# chemical symbols (any letter case is accepted besides: schema.Key.fold_case)
METAL_SPELLINGS = {"aluminum": "aluminium", "al": "aluminium", "cu": "copper", "ag": "silver",
                   "au": "gold", "nb": "niobium"}


def is_superconducting(wall: Wall) -> bool:
    return wall.metal in SUPERCONDUCTORS


def has_surface_resistance(wall: Wall) -> bool:
    """Whether the wall says enough to give its R_s (a positive conductivity, a positive
    surface resistance, or a superconductor with its temperature)."""
    if wall.surface_resistance is not None:
        return wall.surface_resistance > 0
    if is_superconducting(wall):
        return wall.temperature is not None and wall.temperature > 0
    return bool(wall.conductivity and wall.conductivity > 0)


def wall_surface_resistance(wall: Wall, omega: float) -> float:
    """R_s in ohms of the metal ``wall`` at angular frequency ``omega``."""
    if wall.surface_resistance is not None:
        return wall.surface_resistance
    if is_superconducting(wall):
        return (bcs_resistance(SUPERCONDUCTORS[wall.metal], omega / (2 * math.pi),
                               wall.temperature) + (wall.residual_resistance or 0.0))
    return surface_resistance(omega, wall.conductivity, wall.roughness)
