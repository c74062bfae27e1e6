"""The axisymmetric model: a meridional mesh with a material on every region and a kind on
every wall, checked like the 3D model, plus the check that each permittivity is a body of
revolution too."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ..geometry.meridional import AXIS, MeridionalMesh
from ..materials import Material
from ..model import PERIODIC, PeriodicPair, check_wall
from ..walls import Wall, WallKinds

# eps_r(r cos φ, r sin φ, z) must not depend on φ by more than this, relatively
ROTATION_TOLERANCE = 1e-9


@dataclass(frozen=True)
class AxisymmetricModel(WallKinds):
    section: MeridionalMesh
    materials: dict[str, Material]
    walls: dict[str, Wall] = field(default_factory=dict)
    # a cell periodic along z: the section's boundary lines paired (axisymmetric.periodic)
    periodic: tuple[PeriodicPair, ...] = ()

    def wall_kind(self, wall_name: str) -> str:
        if any(wall_name in (p.wall_a, p.wall_b) for p in self.periodic):
            return PERIODIC
        return super().wall_kind(wall_name)


def make_axisymmetric_model(section: MeridionalMesh, materials: dict[str, Material],
                            walls: dict[str, Wall], *, source: str | None = None,
                            periodic: tuple[PeriodicPair, ...] = ()) -> AxisymmetricModel:
    missing = sorted(set(materials) - set(section.region_names))
    if missing:
        raise InputError(f"the section has no region {missing[0]!r}; its regions are "
                         f"{', '.join(map(repr, sorted(section.region_names)))}",
                         source=source, field=f"regions.{missing[0]}")
    unset = sorted(set(section.region_names) - set(materials))
    if unset:
        raise InputError(f"the section region(s) {', '.join(map(repr, unset))} have no "
                         f"material; add [regions.{unset[0]}] with eps_r", source=source,
                         field="regions")
    for name, wall in walls.items():
        if name == AXIS:
            raise InputError("'axis' is the line r = 0, not a wall; it takes no condition",
                             source=source, field=f"walls.{name}")
        if name not in section.wall_names:
            raise InputError(f"the section has no boundary named {name!r}; its named "
                             f"boundaries are {', '.join(sorted(set(section.wall_names) - {AXIS}))}",
                             source=source, field=f"walls.{name}")
        check_wall(name, wall, source)
    for name, material in materials.items():
        rz = section.points[np.unique(section.triangles[section.tri_region
                                                        == section.region_names[name]])]
        points = np.column_stack([rz[:, 0], np.zeros(len(rz)), rz[:, 1]])
        try:
            material.check(points, field=f"regions.{name}")
            if axial_uniaxial(material) is None:
                material.require_isotropic(name, "the body-of-revolution solver (besides a "
                                           "uniaxial eps_r with its axis along z)")
            if material.mu_tan_delta:
                raise InputError("a magnetic loss tangent is not available yet on the "
                                 "body-of-revolution solver; solve the part in 3D",
                                 field=f"regions.{name}.mu_tan_delta")
        except InputError as exc:
            raise exc.located(source=source) from None
        if not material.is_uniform:
            _check_rotation_invariant(material, rz, name, source)
    for pair in periodic:
        for name in (pair.wall_a, pair.wall_b):
            if name not in section.wall_names or name == AXIS:
                raise InputError(f"the section has no boundary named {name!r}; its named "
                                 f"boundaries are "
                                 f"{', '.join(sorted(set(section.wall_names) - {AXIS}))}",
                                 source=source, field="periodic.pair")
    return AxisymmetricModel(section=section, materials=dict(materials), walls=dict(walls),
                             periodic=tuple(periodic))


def axial_uniaxial(material: Material):
    """The material's anisotropy.Uniaxial when its eps_r is uniaxial about z (the only
    anisotropy a body of revolution keeps) and mu_r is a number; else None."""
    u = material.uniaxial
    if u is None or material.mu_tensor is not None or abs(abs(u.axis[2]) - 1) > 1e-12:
        return None
    return u


def _check_rotation_invariant(material: Material, rz: np.ndarray, name: str, source) -> None:
    """A permittivity expression in x, y, z must not change when the point turns about z."""
    reference = material.eps_at(rz[:, 0], np.zeros(len(rz)), rz[:, 1])
    for phi in (0.7, 2.1, 4.0):
        turned = material.eps_at(rz[:, 0] * np.cos(phi), rz[:, 0] * np.sin(phi), rz[:, 1])
        if np.max(np.abs(turned - reference)) > ROTATION_TOLERANCE * np.max(np.abs(reference)):
            raise InputError(f"eps_r of region {name!r} changes around the z axis, so the part "
                             "is not a body of revolution; solve it in 3D or write eps_r in "
                             "r = sqrt(x**2 + y**2) and z", source=source,
                             field=f"regions.{name}.eps_r")
