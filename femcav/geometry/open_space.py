"""An open part: the part's solids wrapped in air and an absorbing shell.

The part sits at the origin. Beyond its clearance the shell (a ball, a can about the z axis
or a box: ``shell`` = "sphere", "cylinder" or "box") of ``absorber_thickness`` is the region
``absorber``, which the case makes a perfectly matched layer of the matching shape
(fem.absorber; ``shell_layers``); the air between part and shell is the region ``air``. The
shell's outer surface is unnamed, so a PEC wall backs the layer.

A case sets clearance, thickness and shell in its [open] table, with defaults from the
frequency the solve looks near (femcav.case). Called without them (the Python API), a builder
takes the part's largest dimension for both lengths: for a sphere of eps_r 36 at its lowest
mode that is a sixth of the free-space wavelength each; measured with the default layer
strength (fem.absorber), the sphere's Q_rad is then within 1.1 % of the exact one.
"""

from __future__ import annotations

import math

from .parts import Layout
from .solids import Box, Cylinder, Sphere

SHELLS = {"sphere": "spherical", "cylinder": "cylindrical", "box": "cartesian"}
OPEN_REGIONS = ("air", "absorber")
SYMMETRY_PLANES = {"x": 0.0, "y": 0.0, "z": 0.0}


def shell_layers(parameters: dict) -> dict[str, str]:
    """The absorbing region of an open builder's part and its pml shape."""
    return {"absorber": SHELLS[parameters.get("shell") or "sphere"]}


def open_layout(fills: list, ball: float, half_sizes: tuple[float, float], part_size: float,
                clearance, thickness, shell, description: str) -> Layout:
    """``fills`` (name, solid) within a ball of radius ``ball`` about the origin and within
    the cylinder of radius and half-height ``half_sizes``, wrapped in air and the shell."""
    clearance = part_size if clearance is None else clearance
    thickness = clearance if thickness is None else thickness
    shell = shell or "sphere"
    if shell == "sphere":
        inner, outer = (Sphere((0.0, 0.0, 0.0), ball + d) for d in (clearance,
                                                                     clearance + thickness))
    elif shell == "cylinder":
        inner, outer = (Cylinder((0.0, 0.0, -half_sizes[1] - d), (0.0, 0.0,
                                 2 * (half_sizes[1] + d)), half_sizes[0] + d)
                        for d in (clearance, clearance + thickness))
    else:
        inner, outer = (Box((-half_sizes[0] - d, -half_sizes[0] - d, -half_sizes[1] - d),
                            (2 * (half_sizes[0] + d),) * 2 + (2 * (half_sizes[1] + d),))
                        for d in (clearance, clearance + thickness))
    return Layout(space=[outer], background="absorber", fills=[("air", inner), *fills],
                  description=f"{description} in air {clearance:g} m deep, absorbing "
                              f"{shell} shell {thickness:g} m thick")


def ball_around_cylinder(radius: float, height: float) -> float:
    return math.hypot(radius, height / 2)
