"""Rectangular cavity with a cylindrical metal tuning post entering through the top wall.

The box fills 0 <= x <= width, 0 <= y <= height, 0 <= z <= length. The post, of post_radius,
enters through the y = height wall at (post_x, post_z) (default: the centre of that wall) and
reaches down to y = height - post_depth. One region, ``inside``; walls ``x_min`` ... ``z_max``
and ``post``. Symmetry planes: x = width/2 and z = length/2 where the post is centred on them.
"""

from __future__ import annotations

from ._faces import box_face_namer
from .params import Param, require
from .parts import Layout
from .solids import Box, Cylinder

PARAMETERS = {"width": Param(), "height": Param(), "length": Param(),
              "post_radius": Param(), "post_depth": Param(),
              "post_x": Param(required=False, default=None, minimum="nonnegative"),
              "post_z": Param(required=False, default=None, minimum="nonnegative")}
REGIONS = ("inside",)
WALLS = ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max", "post")


def _post_position(width, length, post_x, post_z):
    return (width / 2 if post_x is None else post_x, length / 2 if post_z is None else post_z)


def layout(width, height, length, post_radius, post_depth, post_x, post_z) -> Layout:
    size = (width, height, length)
    px, pz = _post_position(width, length, post_x, post_z)
    require(post_depth < height, "post_depth must be less than the height (the post would "
            "touch the opposite wall)", "geometry.post_depth")
    # a relation is reported at the key whose value breaks it, the others named in the text
    require(2 * post_radius < min(width, length), f"the post ({2 * post_radius:g} m across) "
            f"does not fit between the walls: post_radius must be below half of width and of "
            f"length ({min(width, length) / 2:g} m)", "geometry.post_radius")
    for axis, p, side in (("x", px, width), ("z", pz, length)):
        require(post_radius < min(p, side - p), f"the post touches a side wall: post_{axis} "
                f"must keep post_radius ({post_radius:g} m) from both walls, between "
                f"{post_radius:g} and {side - post_radius:g} m", f"geometry.post_{axis}")
    overhang = 0.1 * height  # the post starts above the wall so that the cut is clean
    post = Cylinder((px, height + overhang, pz), (0, -(post_depth + overhang), 0), post_radius)
    return Layout(space=[Box((0, 0, 0), size)], background="inside", metal=[("post", post)],
                  outer_wall=box_face_namer(size, 1e-7 * max(size)),
                  feature_size=height - post_depth,
                  description=f"box {width:g} x {height:g} x {length:g} m, post depth "
                              f"{post_depth:g} m")


def symmetry_planes(width, height, length, post_radius, post_depth, post_x, post_z):
    px, pz = _post_position(width, length, post_x, post_z)
    planes = {}
    if abs(px - width / 2) <= 1e-9 * width:
        planes["x"] = width / 2
    if abs(pz - length / 2) <= 1e-9 * length:
        planes["z"] = length / 2
    return planes
