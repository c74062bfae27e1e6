"""An open part: the part's solids wrapped in air and a spherical absorbing shell.

The part sits at the origin. The space is the ball of radius R + clearance + thickness
(R: the radius of the ball around the part); the shell beyond R + clearance is the region
``absorber``, which the case makes a perfectly matched layer (fem.absorber; its material
defaults to a spherical layer of air, see ABSORBING), and the air between part and shell is
the region ``air``. The shell's outer surface is unnamed, so a PEC wall backs the layer.

Defaults without a frequency at hand (a builder sees lengths only): clearance and thickness
both the part's largest dimension. For a sphere of eps_r 36 at its lowest mode that is a
sixth of the free-space wavelength each (eps_r 80: a ninth); measured with the default
layer strength (fem.absorber), the sphere's Q_rad is then within 1.1 % of the exact one.
"""

from __future__ import annotations

import math

from .params import Param
from .parts import Layout
from .solids import Sphere

ABSORBING = {"absorber": "spherical"}   # region -> pml shape, the default material
OPEN_PARAMETERS = {
    "clearance": Param(required=False, default=None,
                       doc="air between the part and the absorbing shell"),
    "absorber_thickness": Param(required=False, default=None,
                                doc="the absorbing shell's thickness"),
}
OPEN_REGIONS = ("air", "absorber")
SYMMETRY_PLANES = {"x": 0.0, "y": 0.0, "z": 0.0}


def open_layout(fills: list, part_radius: float, part_size: float, clearance, thickness,
                description: str) -> Layout:
    """``fills`` (name, solid) inside a ball of ``part_radius`` about the origin, wrapped."""
    clearance = part_size if clearance is None else clearance
    thickness = clearance if thickness is None else thickness
    inner = part_radius + clearance
    return Layout(space=[Sphere((0.0, 0.0, 0.0), inner + thickness)], background="absorber",
                  fills=[("air", Sphere((0.0, 0.0, 0.0), inner)), *fills],
                  description=f"{description} in air to r={inner:g} m, absorbing shell "
                              f"{thickness:g} m thick")


def ball_around_cylinder(radius: float, height: float) -> float:
    return math.hypot(radius, height / 2)
