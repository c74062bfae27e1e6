"""Rectangular box cavity.

The box fills 0 <= x <= width, 0 <= y <= height, 0 <= z <= length. One region, ``inside``;
six walls named by their face: ``x_min``, ``x_max``, ``y_min``, ``y_max``, ``z_min``,
``z_max``. Symmetry planes: x = width/2, y = height/2, z = length/2.
"""

from __future__ import annotations

from ._faces import box_face_namer
from .params import Param
from .parts import Layout
from .solids import Box

PARAMETERS = {"width": Param(doc="size along x"), "height": Param(doc="size along y"),
              "length": Param(doc="size along z")}
REGIONS = ("inside",)
WALLS = ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max")


def layout(width: float, height: float, length: float) -> Layout:
    size = (width, height, length)
    return Layout(space=[Box((0, 0, 0), size)], background="inside",
                  outer_wall=box_face_namer(size, 1e-7 * max(size)),
                  description=f"box {width:g} x {height:g} x {length:g} m")


def symmetry_planes(width: float, height: float, length: float) -> dict[str, float]:
    return {"x": width / 2, "y": height / 2, "z": length / 2}
