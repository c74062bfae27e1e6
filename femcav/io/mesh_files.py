"""A tagged mesh as files: gmsh ``.msh`` to mesh again from, VTK ``.vtu`` to look at.

The ``.msh`` file is gmsh's 2.2 ASCII format with one physical group per region (volumes)
and per named wall (surfaces), so ``femcav.geometry.read_mesh`` gives back the same region
and wall names and a case file can use it as ``mesh = "mesh.msh"``. Coordinates are in
metres, whatever unit the mesh came in. Version 2.2 because meshio writes it without needing
gmsh's entity bookkeeping, and every gmsh release and most mesh tools still read it.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..geometry.mesh import TaggedMesh

VOLUME, SURFACE = 3, 2


def write_msh(mesh: TaggedMesh, path: Path) -> None:
    import meshio

    clash = sorted(set(mesh.region_names) & set(mesh.wall_names))
    if clash:
        # gmsh names are unique across dimensions in meshio's field_data.
        raise ValueError(f"a region and a wall share the name {clash[0]!r}")
    cells = [("tetra", mesh.tets)]
    tags = [mesh.tet_region.astype(np.int32)]
    if len(mesh.faces):
        cells.append(("triangle", mesh.faces))
        tags.append(mesh.face_tag.astype(np.int32))
    field_data = {name: np.array([tag, VOLUME]) for name, tag in mesh.region_names.items()}
    field_data |= {name: np.array([tag, SURFACE]) for name, tag in mesh.wall_names.items()}
    # The elementary ("geometrical") entity of each cell is its physical group: the mesh
    # keeps no finer record of the solids it was cut from.
    out = meshio.Mesh(mesh.points, cells, field_data=field_data,
                      cell_data={"gmsh:physical": tags, "gmsh:geometrical": tags})
    meshio.write(str(path), out, file_format="gmsh22", binary=False)


def write_mesh_vtu(mesh: TaggedMesh, path: Path, quality: np.ndarray | None = None) -> None:
    """Tetrahedra with cell data ``region`` (region id) and, if given, ``quality``."""
    import meshio

    data = {"region": [mesh.tet_region.astype(np.int32)]}
    if quality is not None:
        data["quality"] = [np.asarray(quality, dtype=float)]
    meshio.write(str(path), meshio.Mesh(mesh.points, [("tetra", mesh.tets)], cell_data=data),
                 file_format="vtu")
