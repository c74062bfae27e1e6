"""The model: a tagged mesh with a material on every region and a kind on every wall."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import InputError
from .geometry.mesh import TaggedMesh
from .materials import Material
from .wall_resistance import has_surface_resistance
from .walls import KINDS, METAL, Wall, WallKinds

FORMS = ("E", "H")
# The kind of a face that a periodic pair ties to its partner: no wall condition of its own.
PERIODIC = "periodic"


@dataclass(frozen=True)
class PeriodicPair:
    """Fields on ``wall_b`` are those on ``wall_a`` (a translate of it) times e^{-j phase}."""

    wall_a: str
    wall_b: str
    phase_rad: float


@dataclass(frozen=True)
class Model(WallKinds):
    mesh: TaggedMesh
    materials: dict[str, Material]
    walls: dict[str, Wall] = field(default_factory=dict)
    periodic: tuple[PeriodicPair, ...] = ()     # a periodic cell's face pairs (fem.periodic)

    def wall_kind(self, wall_name: str) -> str:
        if any(wall_name in (p.wall_a, p.wall_b) for p in self.periodic):
            return PERIODIC
        return super().wall_kind(wall_name)


def make_model(mesh: TaggedMesh, materials: dict[str, Material], walls: dict[str, Wall],
               *, source: str | None = None, periodic: tuple[PeriodicPair, ...] = ()) -> Model:
    """Check that case and mesh name the same regions and existing walls, then pair them."""
    missing = sorted(set(materials) - set(mesh.region_names))
    if missing:
        raise InputError(f"the mesh has no region {', '.join(map(repr, missing))}; its regions "
                         f"are {_listing(mesh.region_names)}", source=source,
                         field=f"regions.{missing[0]}")
    unset = sorted(set(mesh.region_names) - set(materials))
    if unset:
        raise InputError(f"the mesh region(s) {', '.join(map(repr, unset))} have no material; "
                         f"add [regions.{unset[0]}] with eps_r", source=source, field="regions")
    unknown_walls = sorted(set(walls) - set(mesh.wall_names))
    if unknown_walls:
        raise InputError(f"the mesh has no surface named {unknown_walls[0]!r}; its named "
                         f"surfaces are {_listing(mesh.wall_names)}", source=source,
                         field=f"walls.{unknown_walls[0]}")
    if walls:
        boundary = mesh.boundary_face_keys()
        faces = np.sort(mesh.faces, axis=1)
        for name in walls:
            tagged = faces[mesh.face_tag == mesh.wall_names[name]]
            if not any(tuple(f) in boundary for f in tagged.tolist()):
                raise InputError(f"the surface {name!r} is inside the mesh, not on its "
                                 "boundary; a wall condition needs a boundary surface",
                                 source=source, field=f"walls.{name}")
    for name, wall in walls.items():
        check_wall(name, wall, source)
    for name, material in materials.items():
        region_id = mesh.region_names[name]
        points = mesh.points[mesh.tets[mesh.tet_region == region_id].reshape(-1)]
        try:
            material.check(points, field=f"regions.{name}")
        except InputError as exc:
            raise exc.located(source=source) from None
    for pair in periodic:
        for name in (pair.wall_a, pair.wall_b):
            if name not in mesh.wall_names:
                raise InputError(f"the mesh has no surface named {name!r} for a periodic pair; "
                                 f"its named surfaces are {_listing(mesh.wall_names)}",
                                 source=source, field="periodic.pair")
    return Model(mesh=mesh, materials=dict(materials), walls=dict(walls),
                 periodic=tuple(periodic))


def check_wall(name: str, wall: Wall, source: str | None = None) -> None:
    """A wall's kind is known, a metal has a way to its surface resistance, and only a
    metal has loss keys (3D and axisymmetric models alike)."""
    if wall.kind not in KINDS:
        raise InputError(f"unknown wall kind {wall.kind!r}; allowed: {', '.join(KINDS)}",
                         source=source, field=f"walls.{name}.kind")
    if wall.kind == METAL and not has_surface_resistance(wall):
        raise InputError("a metal wall needs a positive conductivity or surface resistance",
                         source=source, field=f"walls.{name}.conductivity")
    if wall.kind != METAL and (wall.conductivity is not None or wall.roughness is not None):
        raise InputError(f"conductivity and roughness belong to kind = \"metal\"; a "
                         f"{wall.kind.upper()} wall has no loss", source=source,
                         field=f"walls.{name}.conductivity")


def _listing(names) -> str:
    return ", ".join(repr(n) for n in sorted(names)) or "(none)"
