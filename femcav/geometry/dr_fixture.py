"""Dielectric-resonator fixture: a cylindrical puck on a low-permittivity support inside a
cylindrical metal shield.

Shield: x² + y² <= shield_radius², 0 <= z <= shield_height. Support: a cylinder of
support_radius from the floor (z = 0) up to z = support_height (0: no support, the puck sits on
the floor). Puck: a cylinder of puck_radius and puck_height on top of the support, with an
optional central hole of puck_hole_radius (0: none). Puck and support can sit off the axis by
puck_offset along x. Regions ``air``, ``support`` (when present), ``puck``; walls ``side``,
``bottom``, ``top``. Symmetry planes: y = 0, and x = 0 when puck_offset = 0.
"""

from __future__ import annotations

from ._faces import cylinder_face_namer
from .params import Param, require
from .parts import Layout
from .solids import Cylinder

PARAMETERS = {
    "shield_radius": Param(), "shield_height": Param(),
    "puck_radius": Param(), "puck_height": Param(),
    "puck_hole_radius": Param(required=False, default=0.0, minimum="nonnegative"),
    "support_radius": Param(required=False, default=None),
    "support_height": Param(required=False, default=0.0, minimum="nonnegative"),
    "puck_offset": Param(required=False, default=0.0, minimum="any", doc="along x"),
}
REGIONS = ("air", "support", "puck")
NEEDS_MATERIAL = ("support", "puck")
WALLS = ("side", "bottom", "top")


def layout(shield_radius, shield_height, puck_radius, puck_height, puck_hole_radius,
           support_radius, support_height, puck_offset) -> Layout:
    support_radius = puck_radius / 2 if support_radius is None else support_radius
    # a relation is reported at the key whose value breaks it, the others named in the text
    top = support_height + puck_height
    require(support_height < shield_height, f"the support reaches the lid: support_height must "
            f"be below shield_height ({shield_height:g} m)", "geometry.support_height")
    require(top < shield_height, f"the puck (on its support) reaches the lid: puck_height + "
            f"support_height ({support_height:g} m) must stay below shield_height "
            f"({shield_height:g} m)", "geometry.puck_height")
    for name, r in (("puck_radius", puck_radius), ("support_radius", support_radius)):
        require(r < shield_radius, f"{name} ({r:g} m) must be smaller than shield_radius "
                f"({shield_radius:g} m)", f"geometry.{name}")
    require(abs(puck_offset) + max(puck_radius, support_radius) < shield_radius,
            f"the puck or support touches the shield side wall: |puck_offset| + "
            f"max(puck_radius, support_radius) ({max(puck_radius, support_radius):g} m) must "
            f"stay below shield_radius ({shield_radius:g} m)", "geometry.puck_offset")
    require(puck_hole_radius < puck_radius, "puck_hole_radius must be smaller than puck_radius",
            "geometry.puck_hole_radius")
    centre = (puck_offset, 0.0)
    fills = []
    if support_height > 0:
        fills.append(("support", Cylinder((*centre, 0.0), (0, 0, support_height),
                                          support_radius)))
    fills.append(("puck", Cylinder((*centre, support_height), (0, 0, puck_height), puck_radius)))
    if puck_hole_radius > 0:
        fills.append(("air", Cylinder((*centre, support_height), (0, 0, puck_height),
                                      puck_hole_radius)))
    return Layout(space=[Cylinder((0, 0, 0), (0, 0, shield_height), shield_radius)],
                  background="air", fills=fills,
                  outer_wall=cylinder_face_namer(shield_height, 1e-7 * shield_height),
                  description=f"DR fixture: puck r={puck_radius:g} m, h={puck_height:g} m in "
                              f"shield r={shield_radius:g} m, h={shield_height:g} m")


def symmetry_planes(puck_offset, **_) -> dict[str, float]:
    return {"y": 0.0} if puck_offset else {"x": 0.0, "y": 0.0}
