"""Geometry: parametric builders and mesh import, both giving a TaggedMesh."""

from . import box, pillbox
from .importer import read_mesh
from .mesh import TaggedMesh

BUILDERS = {"box": box, "pillbox": pillbox}

__all__ = ["BUILDERS", "TaggedMesh", "read_mesh"]
