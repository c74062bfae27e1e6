"""Two identical rectangular resonators coupled through a rectangular iris in their common
wall: the building block of an iris-coupled filter.

The first box fills 0 <= x <= width, 0 <= y <= height, 0 <= z <= length; a wall of
``wall_thickness`` follows, pierced by an iris of ``iris_width`` (along x) by ``iris_height``
(along y, default the full height), centred in x and y; the second box, equal to the first,
lies beyond the wall. One region, ``inside``; every outer surface is the wall ``enclosure``.
Symmetry planes: the mid-plane of the wall (z) and x = width/2 (the iris is centred).
"""

from __future__ import annotations

from .params import Param, require
from .parts import Layout
from .solids import Box

PARAMETERS = {"width": Param(doc="each box along x"), "height": Param(doc="along y"),
              "length": Param(doc="each box along z"),
              "iris_width": Param(doc="the aperture along x"),
              "iris_height": Param(required=False, default=None,
                                   doc="the aperture along y (default: the full height)"),
              "wall_thickness": Param(doc="the common wall the iris pierces")}
REGIONS = ("inside",)
WALLS = ("enclosure",)


def layout(width, height, length, iris_width, iris_height, wall_thickness) -> Layout:
    iris_height = height if iris_height is None else iris_height
    require(iris_width <= width, f"the iris ({iris_width:g} m) is wider than the box "
            f"({width:g} m)", "geometry.iris_width")
    require(iris_height <= height, f"the iris ({iris_height:g} m) is taller than the box "
            f"({height:g} m)", "geometry.iris_height")
    iris = Box(((width - iris_width) / 2, (height - iris_height) / 2, length),
               (iris_width, iris_height, wall_thickness))
    return Layout(space=[Box((0, 0, 0), (width, height, length)), iris,
                         Box((0, 0, length + wall_thickness), (width, height, length))],
                  background="inside", outer_wall=lambda points: "enclosure",
                  feature_size=min(iris_width, iris_height, wall_thickness),
                  description=f"two boxes {width:g} x {height:g} x {length:g} m, iris "
                              f"{iris_width:g} x {iris_height:g} m")


def symmetry_planes(width, height, length, iris_width, iris_height, wall_thickness
                    ) -> dict[str, float]:
    return {"x": width / 2, "z": length + wall_thickness / 2}
