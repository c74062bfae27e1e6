"""A gmsh model session and its conversion into a TaggedMesh.

Builders describe their part as a Layout (parts.py), which is meshed here and read back through
a ``.msh`` file with the same reader as an imported mesh, so built and imported meshes take one
path into the model.
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


def write_and_read(gmsh, source: str) -> TaggedMesh:
    """Write the meshed model to a temporary .msh and read it back as a TaggedMesh."""
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "built.msh"
        gmsh.option.setNumber("Mesh.MshFileVersion", 4.1)
        gmsh.write(str(path))
        mesh = read_mesh(path)
    return TaggedMesh(**{**mesh.__dict__, "source": source})
