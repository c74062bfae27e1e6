"""A dielectric sphere in free space (an open part, geometry.open_space).

The sphere of ``radius`` is centred at the origin: region ``sphere`` (needs a material),
wrapped in ``air`` and the absorbing shell ``absorber``. No named walls (the shell's outer
surface is PEC). Symmetry planes: x = 0, y = 0, z = 0.
"""

from __future__ import annotations

from .open_space import OPEN_REGIONS, SYMMETRY_PLANES, open_layout
from .params import Param
from .parts import Layout
from .solids import Sphere

PARAMETERS = {"radius": Param()}
REGIONS = ("sphere", *OPEN_REGIONS)
NEEDS_MATERIAL = ("sphere",)
WALLS = ()
OPEN = True      # wrapped in air and an absorbing shell ([open], geometry.open_space)


def part_size(radius: float) -> float:
    return 2 * radius


def layout(radius: float, clearance=None, absorber_thickness=None, shell=None) -> Layout:
    return open_layout([("sphere", Sphere((0.0, 0.0, 0.0), radius))], radius,
                       (radius, radius), part_size(radius), clearance, absorber_thickness,
                       shell, f"sphere r={radius:g} m")


def symmetry_planes(**_) -> dict[str, float]:
    return dict(SYMMETRY_PLANES)
