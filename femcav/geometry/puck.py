"""A dielectric puck (a cylinder, optionally with a central hole) in free space (an open
part, geometry.open_space).

The puck of ``radius`` and ``height`` has its axis on z and its mid-plane at z = 0; a hole
of ``hole_radius`` (0: none) runs through it. Region ``puck`` (needs a material), wrapped in
``air`` and the absorbing shell ``absorber``. No named walls. Symmetry planes: x = 0, y = 0,
z = 0.
"""

from __future__ import annotations

from .open_space import OPEN_REGIONS, SYMMETRY_PLANES, ball_around_cylinder, open_layout
from .params import Param, require
from .parts import Layout
from .solids import Cylinder

PARAMETERS = {"radius": Param(), "height": Param(doc="along the axis z"),
              "hole_radius": Param(required=False, default=0.0, minimum="nonnegative")}
REGIONS = ("puck", *OPEN_REGIONS)
NEEDS_MATERIAL = ("puck",)
WALLS = ()
OPEN = True      # wrapped in air and an absorbing shell ([open], geometry.open_space)


def part_size(radius: float, height: float, **_) -> float:
    return max(2 * radius, height)


def layout(radius: float, height: float, hole_radius: float = 0.0, clearance=None,
           absorber_thickness=None, shell=None) -> Layout:
    require(hole_radius < radius, "hole_radius must be smaller than radius",
            "geometry.hole_radius")
    fills = [("puck", Cylinder((0.0, 0.0, -height / 2), (0.0, 0.0, height), radius))]
    if hole_radius > 0:
        fills.append(("air", Cylinder((0.0, 0.0, -height / 2), (0.0, 0.0, height),
                                      hole_radius)))
    return open_layout(fills, ball_around_cylinder(radius, height), (radius, height / 2),
                       part_size(radius, height), clearance, absorber_thickness, shell,
                       f"puck r={radius:g} m, h={height:g} m")


def symmetry_planes(**_) -> dict[str, float]:
    return dict(SYMMETRY_PLANES)
