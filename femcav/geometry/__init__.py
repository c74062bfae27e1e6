"""Geometry: parametric builders and mesh import, both giving a TaggedMesh."""

from __future__ import annotations

from ..errors import InputError
from . import (box, coax, composite, dr_fixture, elliptical_cells, iris_pair, loaded_box,
               pillbox, puck, sphere, tuned_box, tuned_pillbox)
from .importer import read_mesh
from .mesh import TaggedMesh
from .parts import DEFAULT_SIZE_FRACTION, Layout, Sizing, mesh_layout, symmetry_wall_name

BUILDERS = {"box": box, "pillbox": pillbox, "loaded_box": loaded_box, "coax": coax,
            "dr_fixture": dr_fixture, "tuned_box": tuned_box, "tuned_pillbox": tuned_pillbox,
            "composite": composite, "elliptical_cells": elliptical_cells,
            "iris_pair": iris_pair, "sphere": sphere, "puck": puck}

def builder_layout(name: str, params: dict) -> Layout:
    return BUILDERS[name].layout(**params)


def build_part(name: str, *, mesh_size: float | None = None, sizing: Sizing | None = None,
               symmetry: tuple[str, ...] = (), curved: bool = False, **params) -> TaggedMesh:
    """Mesh builder ``name`` with ``params`` (SI floats); cut at the symmetry planes named
    in ``symmetry`` (axes "x", "y", "z"), keeping the side at or above each plane."""
    builder = BUILDERS[name]
    full = {k: p.default for k, p in builder.PARAMETERS.items() if not p.required}
    full.update(params)
    layout = builder.layout(**full)
    planes = builder.symmetry_planes(**full)
    for axis in symmetry:
        if axis not in planes:
            raise InputError(f"this {name} has no symmetry plane normal to {axis}; it has "
                             f"{', '.join(planes) or 'none'}", field=f"symmetry.{axis}")
    if sizing is None:
        sizing = Sizing(size=mesh_size or DEFAULT_SIZE_FRACTION * layout.extent(), curved=curved)
    return mesh_layout(layout, sizing, {axis: planes[axis] for axis in symmetry}, name=name)


__all__ = ["BUILDERS", "Layout", "Sizing", "TaggedMesh", "build_part", "builder_layout",
           "read_mesh", "symmetry_wall_name"]
