"""A dielectric sphere in free space (an open part, geometry.open_space).

The sphere of ``radius`` is centred at the origin: region ``sphere`` (needs a material),
wrapped in ``air`` and the absorbing shell ``absorber``. No named walls (the shell's outer
surface is PEC). Symmetry planes: x = 0, y = 0, z = 0.
"""

from __future__ import annotations

from .open_space import (ABSORBING, OPEN_PARAMETERS, OPEN_REGIONS, SYMMETRY_PLANES,
                         open_layout)
from .params import Param
from .parts import Layout
from .solids import Sphere

PARAMETERS = {"radius": Param(), **OPEN_PARAMETERS}
REGIONS = ("sphere", *OPEN_REGIONS)
NEEDS_MATERIAL = ("sphere",)
WALLS = ()
ABSORBING = ABSORBING


def layout(radius: float, clearance=None, absorber_thickness=None) -> Layout:
    return open_layout([("sphere", Sphere((0.0, 0.0, 0.0), radius))], radius, 2 * radius,
                       clearance, absorber_thickness, f"sphere r={radius:g} m")


def symmetry_planes(**_) -> dict[str, float]:
    return dict(SYMMETRY_PLANES)
