"""Circular cylinder cavity with a cylindrical metal tuning post entering through the top.

The cavity fills x² + y² <= radius², 0 <= z <= length. The post, of post_radius, enters
through the top wall (z = length) at x = post_offset, y = 0 (default: on the axis) and reaches
down to z = length - post_depth. One region, ``inside``; walls ``side``, ``bottom``, ``top``
and ``post``. Symmetry planes: y = 0, and x = 0 when the post is on the axis.
"""

from __future__ import annotations

from ._faces import cylinder_face_namer
from .params import Param, require
from .parts import Layout
from .solids import Cylinder

PARAMETERS = {"radius": Param(), "length": Param(), "post_radius": Param(),
              "post_depth": Param(),
              "post_offset": Param(required=False, default=0.0, minimum="any")}
REGIONS = ("inside",)
WALLS = ("side", "bottom", "top", "post")


def layout(radius, length, post_radius, post_depth, post_offset) -> Layout:
    require(post_depth < length, "post_depth must be less than the length (the post would "
            "touch the bottom)", "geometry.post_depth")
    # a relation is reported at the key whose value breaks it, the others named in the text
    require(post_radius < radius, f"post_radius ({post_radius:g} m) must be smaller than "
            f"radius ({radius:g} m)", "geometry.post_radius")
    require(abs(post_offset) + post_radius < radius, f"the post touches the side wall: "
            f"|post_offset| + post_radius ({post_radius:g} m) must stay below radius "
            f"({radius:g} m)", "geometry.post_offset")
    overhang = 0.1 * length
    post = Cylinder((post_offset, 0, length + overhang), (0, 0, -(post_depth + overhang)),
                    post_radius)
    return Layout(space=[Cylinder((0, 0, 0), (0, 0, length), radius)], background="inside",
                  metal=[("post", post)],
                  outer_wall=cylinder_face_namer(length, 1e-7 * max(radius, length)),
                  feature_size=length - post_depth,
                  description=f"pillbox r={radius:g} m, l={length:g} m, post depth "
                              f"{post_depth:g} m")


def symmetry_planes(post_offset, **_) -> dict[str, float]:
    return {"y": 0.0} if post_offset else {"x": 0.0, "y": 0.0}
