"""The region and wall names a builder's part will have, read from its layout before any
meshing, so that a misspelt name in a case file is refused at once rather than after gmsh
has run.

Regions: the layout's background and its fills. Walls: the builder's declared outer walls
(``WALLS``), the walls its metal solids leave, and, for a builder that names walls from its
parameters (the composite), its ``wall_names``. A name the part can have may still be missing
from a particular mesh (a wall a symmetry cut takes away): the model's check after meshing
still says so.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError
from . import BUILDERS, builder_layout


@dataclass(frozen=True)
class PartNames:
    regions: tuple[str, ...]
    walls: tuple[str, ...]


def part_names(builder: str, parameters: dict) -> PartNames:
    """The region and wall names of builder ``builder`` with ``parameters`` (SI values)."""
    module = BUILDERS[builder]
    layout = builder_layout(builder, parameters)
    regions = dict.fromkeys([layout.background, *(name for name, _ in layout.fills)])
    own = getattr(module, "wall_names", None)
    walls = dict.fromkeys([*module.WALLS, *(name for name, _ in layout.metal if name),
                           *(own(**parameters) if own else ())])
    return PartNames(regions=tuple(regions), walls=tuple(walls))


def check_case_names(builder: str, parameters: dict, regions: dict, walls: dict) -> None:
    """InputError at the first region or wall of the case that the part cannot have, or at a
    region the builder needs a material for that the case leaves out."""
    names = part_names(builder, parameters)
    for name in regions:
        if name not in names.regions:
            raise InputError(f"this {builder} has no region {name!r}; its regions are "
                             f"{_listing(names.regions)}", field=f"regions.{name}")
    for name in walls:
        if name not in names.walls:
            raise InputError(f"this {builder} has no wall {name!r}; its walls are "
                             f"{_listing(names.walls)}", field=f"walls.{name}")
    for name in getattr(BUILDERS[builder], "NEEDS_MATERIAL", ()):
        if name in names.regions and name not in regions:
            raise InputError(f"the region {name!r} has no material; add [regions.{name}] "
                             "with eps_r", field="regions")


def _listing(names) -> str:
    return ", ".join(map(repr, names)) or "none"
