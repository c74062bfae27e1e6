"""Rectangular box cavity.

The box fills 0 <= x <= width, 0 <= y <= height, 0 <= z <= length (metres). One region,
``inside``; six walls named by the face they are on: ``x_min``, ``x_max``, ``y_min``,
``y_max``, ``z_min``, ``z_max`` (all PEC unless the case says otherwise; a PMC wall on a face
halves the model along a magnetic symmetry plane).
"""

from __future__ import annotations

from .gmsh_session import faces_by_bounds, gmsh_model, mesh_and_read
from .mesh import TaggedMesh

PARAMETERS = {"width": "length", "height": "length", "length": "length", "mesh_size": "length"}
REQUIRED = ("width", "height", "length")
REGIONS = ("inside",)
WALLS = ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max")


def build(width: float, height: float, length: float, mesh_size: float | None = None) -> TaggedMesh:
    size = mesh_size or max(width, height, length) / 10
    with gmsh_model("box") as gmsh:
        volume = gmsh.model.occ.addBox(0, 0, 0, width, height, length)
        gmsh.model.occ.synchronize()
        gmsh.model.addPhysicalGroup(3, [volume], name="inside")
        tol = 1e-4 * max(width, height, length)
        extent = (width, height, length)
        for axis, name in enumerate("xyz"):
            for side, at in (("min", 0.0), ("max", extent[axis])):
                tags = faces_by_bounds(gmsh, lambda b, a=axis, v=at:
                                       abs(b[a] - v) < tol and abs(b[a + 3] - v) < tol)
                gmsh.model.addPhysicalGroup(2, tags, name=f"{name}_{side}")
        return mesh_and_read(gmsh, size, source=f"box builder {width:g} x {height:g} x {length:g} m")
