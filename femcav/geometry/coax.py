"""Coaxial cavity; with a gap at the top, a re-entrant (capacitively loaded) cavity.

Outer conductor: the cylinder x² + y² <= outer_radius², 0 <= z <= length. Inner conductor:
a metal rod of inner_radius on the axis, standing on the bottom (z = 0) and reaching
z = length - gap; with gap = 0 (default) it is shorted to both end walls, a λ/2 coaxial
resonator; with gap > 0 the open end faces the lid across the gap. One region, ``inside``;
walls ``outer`` (curved outer wall), ``inner`` (the rod's surface), ``bottom``, ``top``.
Symmetry planes: x = 0 and y = 0, and z = length/2 when gap = 0.
"""

from __future__ import annotations

from ._faces import cylinder_face_namer
from .params import Param, require
from .parts import Layout
from .solids import Cylinder

PARAMETERS = {"outer_radius": Param(), "inner_radius": Param(), "length": Param(),
              "gap": Param(required=False, default=0.0, minimum="nonnegative",
                           doc="from the rod's open end to the top wall")}
REGIONS = ("inside",)
WALLS = ("outer", "inner", "bottom", "top")


def layout(outer_radius, inner_radius, length, gap) -> Layout:
    require(inner_radius < outer_radius, f"inner_radius must be smaller than outer_radius "
            f"({outer_radius:g} m)", "geometry.inner_radius")
    require(gap < length, f"gap must be shorter than the cavity length ({length:g} m)",
            "geometry.gap")
    tol = 1e-7 * max(outer_radius, length)
    # A shorted rod is made a little longer than the cavity so that the cut goes cleanly
    # through both end walls.
    rod = (Cylinder((0, 0, 0), (0, 0, length - gap), inner_radius) if gap > 0
           else Cylinder((0, 0, -0.1 * length), (0, 0, 1.2 * length), inner_radius))
    return Layout(space=[Cylinder((0, 0, 0), (0, 0, length), outer_radius)], background="inside",
                  metal=[("inner", rod)],
                  outer_wall=cylinder_face_namer(length, tol, side="outer"),
                  feature_size=gap or None,
                  description=f"coaxial cavity {outer_radius:g}/{inner_radius:g} m, "
                              f"l={length:g} m, gap={gap:g} m")


def symmetry_planes(outer_radius, inner_radius, length, gap) -> dict[str, float]:
    planes = {"x": 0.0, "y": 0.0}
    if gap == 0:
        planes["z"] = length / 2
    return planes
