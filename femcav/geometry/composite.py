"""A cavity composed in the case file from boxes and cylinders.

Each entry of ``[[geometry.solids]]`` is one solid with a role:

- ``role = "space"``: part of the cavity (all space solids are united); an optional ``name``
  names the outer walls that lie on this solid's surface;
- ``role = "metal"``: removed from the cavity (a post, a rod, an iris); ``name`` (required)
  names the walls it leaves;
- ``role = "fill"``: a dielectric region inside the cavity; ``name`` (required) is the
  region's name. Where fills overlap the later one wins, so a hole in a puck is a later fill
  of the background region.

Shapes: ``shape = "box"`` with ``corner`` (lowest x, y, z) and ``size``; ``shape =
"cylinder"`` with ``base`` (centre of one end), ``axis`` (from there to the other end's
centre) and ``radius``. All lengths take units. ``background`` names the region of the space
that no fill covers (default ``inside``). Composite parts offer no symmetry cuts.
"""

from __future__ import annotations

import numpy as np

from .. import schema
from ..errors import InputError
from ..units import parse_quantity
from .params import check_share, checked_length
from .parts import Layout
from .solids import Box, Cylinder

PARAMETERS: dict = {}
TABLE = schema.COMPOSITE          # [geometry] keys besides builder
REGIONS: tuple = ()
WALLS: tuple = ()
ROLES = ("space", "metal", "fill")
SHAPE_KEYS = {"box": ("corner", "size"), "cylinder": ("base", "axis", "radius")}


def parse(given: dict, where: str) -> dict:
    """Check the composite description; returns {"solids": [...], "background": str}."""
    for key in given:
        if key not in ("solids", "background"):
            raise InputError("unknown key; a composite takes solids and background",
                             field=f"{where}.{key}")
    background = given.get("background", "inside")
    if not isinstance(background, str) or not background:
        raise InputError("must be a region name", field=f"{where}.background")
    entries = given.get("solids")
    if not isinstance(entries, list) or not entries:
        raise InputError("a composite needs [[geometry.solids]] entries", field=f"{where}.solids")
    solids = [_solid(entry, f"{where}.solids[{i}]") for i, entry in enumerate(entries)]
    _check_proportions(solids, f"{where}.solids")
    if not any(role == "space" for role, _, _ in solids):
        raise InputError('at least one solid needs role = "space"', field=f"{where}.solids")
    return {"solids": solids, "background": background}


def _solid(entry, where: str):
    schema.check_table(entry, schema.SOLID, where)
    shape, role, name = entry.get("shape"), entry.get("role"), entry.get("name", "")
    if shape not in SHAPE_KEYS:
        raise InputError(f"shape must be one of {', '.join(map(repr, SHAPE_KEYS))}, got "
                         f"{shape!r}", field=f"{where}.shape")
    if role not in ROLES:
        raise InputError(f"role must be one of {', '.join(map(repr, ROLES))}, got {role!r}",
                         field=f"{where}.role")
    if role != "space" and not (isinstance(name, str) and name):
        raise InputError(f"a {role} solid needs a name", field=f"{where}.name")
    allowed = {"shape", "role", "name", *SHAPE_KEYS[shape]}
    for key in entry:
        if key not in allowed:
            raise InputError(f"unknown key; a {shape} takes {', '.join(SHAPE_KEYS[shape])}",
                             field=f"{where}.{key}")
    values = {}
    for key in SHAPE_KEYS[shape]:
        if key not in entry:
            raise InputError("missing", field=f"{where}.{key}")
        raw = entry[key]
        if key == "radius":
            values[key] = parse_quantity(raw, "length", field=f"{where}.{key}")
            if values[key] <= 0:
                raise InputError("must be positive", field=f"{where}.{key}")
            checked_length(values[key], f"{where}.{key}", positive=True)
            continue
        if not isinstance(raw, list) or len(raw) != 3:
            raise InputError("must be a list of three lengths", field=f"{where}.{key}")
        values[key] = tuple(checked_length(parse_quantity(v, "length",
                                                          field=f"{where}.{key}[{i}]"),
                                           f"{where}.{key}[{i}]", positive=key == "size")
                            for i, v in enumerate(raw))
    if shape == "box":
        if not all(s > 0 for s in values["size"]):
            raise InputError("all three sides must be positive", field=f"{where}.size")
        solid = Box(values["corner"], values["size"])
    else:
        if np.linalg.norm(values["axis"]) == 0:
            raise InputError("the axis must not be zero", field=f"{where}.axis")
        solid = Cylinder(values["base"], values["axis"], values["radius"])
    return role, name, solid


def _check_proportions(solids, where: str) -> None:
    """Every radius and side resolvable beside the largest extent of any solid."""
    largest = max(float(np.max(s.bounds()[1] - s.bounds()[0])) for _, _, s in solids)
    for i, (_, _, solid) in enumerate(solids):
        sides = (("radius", solid.radius),) if isinstance(solid, Cylinder) else tuple(
            (f"size[{k}]", v) for k, v in enumerate(solid.size))
        for key, value in sides:
            check_share(value, largest, f"{where}[{i}].{key}")


def layout(solids, background) -> Layout:
    space = [(name, s) for role, name, s in solids if role == "space"]
    extent = max(float(np.max(s.bounds()[1] - s.bounds()[0])) for _, s in space)
    tol = 1e-7 * extent

    def outer_wall(points: np.ndarray) -> str:
        for name, solid in space:
            if name and np.all(solid.on_surface(points, tol)):
                return name
        return ""

    return Layout(space=[s for _, s in space], background=background,
                  metal=[(n, s) for role, n, s in solids if role == "metal"],
                  fills=[(n, s) for role, n, s in solids if role == "fill"],
                  outer_wall=outer_wall, description=f"composite of {len(solids)} solids")


def wall_names(solids, background) -> tuple[str, ...]:
    """The walls the case may name: those of the named space solids and of the metal ones."""
    return tuple(name for role, name, _ in solids if name and role in ("space", "metal"))


def symmetry_planes(**_) -> dict[str, float]:
    return {}
