"""Rectangular cavity with a dielectric block (a slab when it spans the box in two directions).

The box fills 0 <= x <= width, 0 <= y <= height, 0 <= z <= length. The block is the brick from
``block_corner`` (its lowest x, y, z) with sides ``block_size``, clipped to the box. Regions
``air`` (the rest of the box) and ``block``; walls as for the box: ``x_min`` ... ``z_max``.
A symmetry plane of the box is offered where the block is centred on it.
"""

from __future__ import annotations

from ._faces import box_face_namer
from .params import Param, require
from .parts import Layout
from .solids import Box

PARAMETERS = {"width": Param(), "height": Param(), "length": Param(),
              "block_corner": Param(kind="point", minimum="nonnegative"),
              "block_size": Param(kind="point")}
REGIONS = ("air", "block")
NEEDS_MATERIAL = ("block",)
WALLS = ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max")


def layout(width, height, length, block_corner, block_size) -> Layout:
    size = (width, height, length)
    for i, axis in enumerate("xyz"):
        side = ("width", "height", "length")[i]
        require(block_corner[i] < size[i], f"the block starts outside the box along {axis}: "
                f"block_corner[{i}] must be below {side} ({size[i]:g} m)",
                f"geometry.block_corner[{i}]")
    return Layout(space=[Box((0, 0, 0), size)], background="air",
                  fills=[("block", Box(block_corner, block_size))],
                  outer_wall=box_face_namer(size, 1e-7 * max(size)),
                  description=f"box {width:g} x {height:g} x {length:g} m with a block")


def symmetry_planes(width, height, length, block_corner, block_size) -> dict[str, float]:
    size = (width, height, length)
    planes = {}
    for i, axis in enumerate("xyz"):
        top = min(block_corner[i] + block_size[i], size[i])
        if abs(block_corner[i] + top - size[i]) <= 1e-9 * size[i]:
            planes[axis] = size[i] / 2
    return planes
