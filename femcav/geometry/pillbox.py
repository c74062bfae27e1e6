"""Circular cylinder ("pillbox") cavity.

The axis is z; the cylinder fills x² + y² <= radius², 0 <= z <= length (metres). One region,
``inside``; three walls: ``side`` (the curved wall), ``bottom`` (z = 0) and ``top``
(z = length). The curved wall is approximated by flat triangles, which adds a geometric
error of the same order h² as the lowest-order elements.
"""

from __future__ import annotations

from .gmsh_session import faces_by_bounds, gmsh_model, mesh_and_read
from .mesh import TaggedMesh

PARAMETERS = {"radius": "length", "length": "length", "mesh_size": "length"}
REQUIRED = ("radius", "length")
REGIONS = ("inside",)
WALLS = ("side", "bottom", "top")


def build(radius: float, length: float, mesh_size: float | None = None) -> TaggedMesh:
    size = mesh_size or max(2 * radius, length) / 10
    with gmsh_model("pillbox") as gmsh:
        volume = gmsh.model.occ.addCylinder(0, 0, 0, 0, 0, length, radius)
        gmsh.model.occ.synchronize()
        gmsh.model.addPhysicalGroup(3, [volume], name="inside")
        tol = 1e-4 * max(radius, length)
        flat_at = lambda z: (lambda b: abs(b[2] - z) < tol and abs(b[5] - z) < tol)
        bottom, top = faces_by_bounds(gmsh, flat_at(0.0)), faces_by_bounds(gmsh, flat_at(length))
        side = [t for _, t in gmsh.model.getEntities(2) if t not in bottom + top]
        for name, tags in (("side", side), ("bottom", bottom), ("top", top)):
            gmsh.model.addPhysicalGroup(2, tags, name=name)
        return mesh_and_read(gmsh, size, source=f"pillbox builder r={radius:g} m, l={length:g} m")
