"""A chain of identical elliptical accelerating cells on the z axis, with beam pipes.

Each cell is two half-cells (cell_shape.py) mirrored in the cell's equator plane: from an
iris (radius iris_radius) round the iris ellipse (semi-axes iris_semi_axis_z along the axis,
iris_semi_axis_r across it), along the straight wall, over the equator ellipse
(equator_semi_axis_z, equator_semi_axis_r) to the equator (radius equator_radius) at
half_cell_length from the iris plane, and back down the same way to the next iris. ``cells``
such cells follow each other (2 half_cell_length apart), with a beam pipe of radius
iris_radius and length pipe_length (default 3 iris_radius: far below its cut-off the pipe's
lowest m = 0 mode, TM01, falls off like exp(-2.405 z / iris_radius), to 7e-4 of its field
over 3 radii; 1.3e-3 for a 1.3 GHz cell with a 35 mm iris) at each end; pipe_length = 0 closes the chain at its end irises. The wall angle is
derived, not given; a shape whose ellipses cannot be joined by a straight wall inside the
half-cell is refused, naming the parameter.

The part runs from z = 0 (the bottom end of the first pipe) to z = 2 (pipe_length +
cells half_cell_length). One region, ``inside``; walls ``cell_wall`` (the cells' curved
wall), ``pipe_wall`` (the pipes' cylinder walls), ``bottom`` (z = 0) and ``top`` (the other
end), the ends being disks of iris_radius. With ``[solve] azimuthal_orders`` the part is
solved on its meridional section, whose elliptic arcs are followed by curved triangles when
``[mesh] curved = true``. Symmetry planes: x = 0, y = 0 and the middle plane in z.

A closed mid-cell (cells = 1, pipe_length = 0) with magnetic (PMC) ends is one period of an
endless chain in its π mode, with electric (PEC) ends in its 0 mode (common practice).
"""

from __future__ import annotations

import math

from .. import schema
from ..walls import METAL, PEC
from .cell_shape import HalfCell, half_cell
from .params import Param, parse_params
from .parts import Layout
from .profile import RevolvedProfile, Segment

PARAMETERS = {
    "equator_radius": Param(doc="the cells' largest radius"),
    "iris_radius": Param(doc="aperture at the irises; also the beam pipes' radius"),
    "half_cell_length": Param(doc="from an iris plane to the next equator plane"),
    "equator_semi_axis_z": Param(), "equator_semi_axis_r": Param(),
    "iris_semi_axis_z": Param(), "iris_semi_axis_r": Param(),
    "pipe_length": Param(required=False, default=None, minimum="nonnegative",
                         doc="each beam pipe; default 3 iris_radius"),
}
TABLE = schema.Table({**{name: schema.Key(schema.PARAMETER_TYPES[p.kind], unit="length")
                         for name, p in PARAMETERS.items()}, "cells": schema.CELL_COUNT})
REGIONS = ("inside",)
WALLS = ("cell_wall", "pipe_wall", "bottom", "top")
DEFAULT_PIPE_RADII = 3.0
# the half-cell's own names, as the case file spells them
_NAMES = {"equator_radius": "equator_radius", "iris_radius": "iris_radius",
          "half_length": "half_cell_length", "equator_semi_z": "equator_semi_axis_z",
          "equator_semi_r": "equator_semi_axis_r", "iris_semi_z": "iris_semi_axis_z",
          "iris_semi_r": "iris_semi_axis_r"}


def parse(given: dict, where: str) -> dict:
    """The lengths through the declared parameters, and the whole number ``cells``."""
    lengths = parse_params(PARAMETERS, {k: v for k, v in given.items() if k != "cells"}, where)
    return {**lengths, "cells": schema.read(given, "cells", TABLE, where)}


def shape(equator_radius, iris_radius, half_cell_length, equator_semi_axis_z,
          equator_semi_axis_r, iris_semi_axis_z, iris_semi_axis_r, **_) -> HalfCell:
    """The half-cell these parameters make (InputError when they make none)."""
    return half_cell(equator_radius, iris_radius, half_cell_length, equator_semi_axis_z,
                     equator_semi_axis_r, iris_semi_axis_z, iris_semi_axis_r, _NAMES)


def _pipe(pipe_length, iris_radius) -> float:
    return DEFAULT_PIPE_RADII * iris_radius if pipe_length is None else pipe_length


def cell_spans(cells: int = 1, pipe_length=None, **params) -> list[tuple[float, float]]:
    """(z at its first iris, z at its second iris) of each cell, metres."""
    pipe, step = _pipe(pipe_length, params["iris_radius"]), 2 * params["half_cell_length"]
    return [(pipe + k * step, pipe + (k + 1) * step) for k in range(cells)]


def cell_chain(wall_kinds: dict[str, str], **params):
    """The cells' spans (cell_spans) and how the chain ends: True for electric walls at its
    end irises (no pipes; ``bottom`` and ``top`` PEC or metal, as unnamed walls are), False
    for magnetic walls there or beam pipes, None for one of each (no phase advance fits)."""
    spans = cell_spans(**params)
    if _pipe(params.get("pipe_length"), params["iris_radius"]) > 0:
        return spans, False
    electric = {wall_kinds.get(end, PEC) in (PEC, METAL) for end in ("bottom", "top")}
    return spans, (electric.pop() if len(electric) == 1 else None)


def layout(equator_radius, iris_radius, half_cell_length, equator_semi_axis_z,
           equator_semi_axis_r, iris_semi_axis_z, iris_semi_axis_r, pipe_length=None,
           cells: int = 1) -> Layout:
    half = shape(equator_radius, iris_radius, half_cell_length, equator_semi_axis_z,
                 equator_semi_axis_r, iris_semi_axis_z, iris_semi_axis_r)
    pipe = _pipe(pipe_length, iris_radius)
    total = 2 * pipe + 2 * cells * half_cell_length
    pieces = [Segment((0.0, 0.0), (iris_radius, 0.0))]
    if pipe > 0:
        pieces.append(Segment((iris_radius, 0.0), (iris_radius, pipe)))
    for k in range(cells):
        z0 = pipe + 2 * k * half_cell_length
        pieces += half.pieces(z0) + half.pieces(z0, mirrored=True)
    if pipe > 0:
        pieces.append(Segment((iris_radius, total - pipe), (iris_radius, total)))
    pieces.append(Segment((iris_radius, total), (0.0, total)))
    tol = 1e-7 * max(equator_radius, total)
    angle = math.degrees(half.wall_angle)
    return Layout(space=[RevolvedProfile(tuple(pieces))], background="inside",
                  outer_wall=_wall_namer(iris_radius, pipe, total, tol),
                  description=f"{cells} elliptical cell{'s' if cells > 1 else ''}, equator "
                              f"r={equator_radius:g} m, iris r={iris_radius:g} m, wall angle "
                              f"{angle:.3f} deg, beam pipes {pipe:g} m")


def _wall_namer(iris_radius: float, pipe: float, total: float, tol: float):
    import numpy as np

    def name(points) -> str:
        r, z = np.hypot(points[:, 0], points[:, 1]), points[:, 2]
        if np.all(np.abs(z) <= tol):
            return "bottom"
        if np.all(np.abs(z - total) <= tol):
            return "top"
        in_pipe = (z <= pipe + tol) | (z >= total - pipe - tol)
        if pipe > 0 and np.all((np.abs(r - iris_radius) <= tol) & in_pipe):
            return "pipe_wall"
        return "cell_wall"
    return name


def symmetry_planes(half_cell_length, cells=1, pipe_length=None, iris_radius=None, **_
                    ) -> dict[str, float]:
    total = 2 * _pipe(pipe_length, iris_radius) + 2 * cells * half_cell_length
    return {"x": 0.0, "y": 0.0, "z": total / 2}
