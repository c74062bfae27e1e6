"""A gmsh model session and its conversion into a TaggedMesh.

Builders describe solids with gmsh's OpenCASCADE kernel, name regions and walls as physical
groups, and call :func:`mesh_and_read`: the mesh goes through a ``.msh`` file and the same
reader as an imported mesh, so built and imported meshes take one path into the model.
"""

from __future__ import annotations

import tempfile
from contextlib import contextmanager
from pathlib import Path

from .importer import read_mesh
from .mesh import TaggedMesh


@contextmanager
def gmsh_model(name: str):
    """Yield the initialised ``gmsh`` module with an empty model; always finalises."""
    import gmsh

    gmsh.initialize(readConfigFiles=False, interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.option.setNumber("General.NumThreads", 1)  # reproducible meshes
        gmsh.model.add(name)
        yield gmsh
    finally:
        gmsh.finalize()


def faces_by_bounds(gmsh, predicate) -> list[int]:
    """Tags of the surfaces whose bounding box (xmin, ymin, zmin, xmax, ymax, zmax) passes."""
    return [tag for dim, tag in gmsh.model.getEntities(2)
            if predicate(gmsh.model.getBoundingBox(dim, tag))]


def mesh_and_read(gmsh, mesh_size: float, source: str, keep_msh: Path | None = None) -> TaggedMesh:
    """Mesh the current model with tetrahedra of at most ``mesh_size`` metres and read it."""
    gmsh.option.setNumber("Mesh.MeshSizeMax", mesh_size)
    gmsh.option.setNumber("Mesh.MeshSizeMin", 0.0)
    gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
    gmsh.option.setNumber("Mesh.Algorithm3D", 1)
    gmsh.option.setNumber("Mesh.MshFileVersion", 4.1)
    gmsh.model.mesh.generate(3)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(keep_msh) if keep_msh else Path(tmp) / "built.msh"
        gmsh.write(str(path))
        mesh = read_mesh(path)
    return TaggedMesh(**{**mesh.__dict__, "source": source})
