"""Circular cylinder ("pillbox") cavity.

The axis is z; the cylinder fills x² + y² <= radius², 0 <= z <= length. One region,
``inside``; walls ``side`` (the curved wall), ``bottom`` (z = 0) and ``top`` (z = length).
The curved wall is approximated by flat triangles, a geometric error of order h² like the
lowest-order elements'. Symmetry planes: x = 0, y = 0, z = length/2.
"""

from __future__ import annotations

from ._faces import cylinder_face_namer
from .params import Param
from .parts import Layout
from .solids import Cylinder

PARAMETERS = {"radius": Param(), "length": Param(doc="along the axis z")}
REGIONS = ("inside",)
WALLS = ("side", "bottom", "top")


def layout(radius: float, length: float) -> Layout:
    return Layout(space=[Cylinder((0, 0, 0), (0, 0, length), radius)], background="inside",
                  outer_wall=cylinder_face_namer(length, 1e-7 * max(radius, length)),
                  description=f"pillbox r={radius:g} m, l={length:g} m")


def symmetry_planes(radius: float, length: float) -> dict[str, float]:
    return {"x": 0.0, "y": 0.0, "z": length / 2}
