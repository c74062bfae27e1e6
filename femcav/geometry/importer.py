"""Read a tetrahedral mesh with named regions and walls from any format meshio reads.

gmsh ``.msh`` (2.2 and 4.x) is the primary format: physical volume groups name regions and
physical surface groups name walls. Other formats give integer cell tags (the first integer
cell-data array found), named by their number.
"""

from __future__ import annotations

import contextlib
import io
from pathlib import Path

import numpy as np

from ..errors import InputError
from .mesh import TaggedMesh
from .validate import check_mesh

_TAG_KEYS = ("gmsh:physical", "medit:ref", "CellEntityIds", "cell_tags", "region", "tag")


def read_mesh(path: str | Path, *, scale: float = 1.0) -> TaggedMesh:
    """Read ``path``; coordinates are multiplied by ``scale`` to give metres."""
    import meshio

    path = Path(path)
    if not path.is_file():
        raise InputError("mesh file not found", source=str(path))
    raw = _read_with_meshio(path)

    tag_key = next((k for k in _TAG_KEYS if k in raw.cell_data), None)
    names_by_dim: dict[int, dict[int, str]] = {2: {}, 3: {}}
    for name, (tag, dim) in getattr(raw, "field_data", {}).items():
        if int(dim) in names_by_dim:
            names_by_dim[int(dim)][int(tag)] = name

    tets, tet_tags, faces, face_tags = [], [], [], []
    for i, block in enumerate(raw.cells):
        tags = (np.asarray(raw.cell_data[tag_key][i], dtype=int).reshape(-1)
                if tag_key else np.zeros(len(block.data), dtype=int))
        if block.type == "tetra":
            tets.append(block.data)
            tet_tags.append(tags)
        elif block.type == "triangle" and tag_key:
            faces.append(block.data)
            face_tags.append(tags)
        elif block.type in ("tetra10", "triangle6"):
            raise InputError(f"second-order cells ({block.type}) are not supported yet; "
                             "mesh with order 1", source=str(path))
    if not tets:
        raise InputError("the mesh has no tetrahedra (femcav needs a 3D tetrahedral mesh)",
                         source=str(path))

    tets = np.concatenate(tets).astype(np.int64)
    tet_tags = np.concatenate(tet_tags)
    region_names = {_name(names_by_dim[3], t, "region"): int(t) for t in np.unique(tet_tags)}
    if faces:
        faces = np.concatenate(faces).astype(np.int64)
        face_tags = np.concatenate(face_tags)
    else:
        faces, face_tags = np.zeros((0, 3), np.int64), np.zeros(0, int)
    wall_names = {_name(names_by_dim[2], t, "wall"): int(t) for t in np.unique(face_tags)}

    # Keep only the points the tetrahedra use, renumbered, so that stray nodes (geometry
    # points, 2D-only entities) never become DOFs.
    used, inverse = np.unique(tets, return_inverse=True)
    renumber = np.full(raw.points.shape[0], -1, dtype=np.int64)
    renumber[used] = np.arange(used.size)
    points = np.asarray(raw.points, dtype=float)[used] * scale
    if points.shape[1] == 2:
        raise InputError("the mesh is two-dimensional; femcav needs 3D tetrahedra",
                         source=str(path))
    faces = renumber[faces]
    keep = np.all(faces >= 0, axis=1)
    mesh = TaggedMesh(points=points[:, :3], tets=inverse.reshape(tets.shape), tet_region=tet_tags,
                      region_names=region_names, faces=faces[keep], face_tag=face_tags[keep],
                      wall_names=wall_names, source=str(path))
    check_mesh(mesh, unit_m=scale)
    return mesh


def _read_with_meshio(path: Path):
    """meshio.read, with the format of a .msh file settled first and meshio's own exits caught.

    For an extension that several formats share, meshio tries each in turn, prints the
    failures to stdout and calls sys.exit when none fits; a gmsh file announces itself on its
    first line, so we name the format instead.
    """
    import meshio

    file_format = None
    if path.suffix.lower() == ".msh":
        with open(path, "rb") as handle:
            file_format = "gmsh" if handle.read(11) == b"$MeshFormat" else "ansys"
    said = io.StringIO()
    try:
        with contextlib.redirect_stdout(said), contextlib.redirect_stderr(said):
            return meshio.read(path, file_format=file_format)
    except (Exception, SystemExit) as exc:  # meshio raises many types for unreadable files
        reason = " ".join(said.getvalue().split()) if isinstance(exc, SystemExit) else (
            f"{type(exc).__name__}: {exc}")
        detail = f" ({reason})" if reason else ""
        raise InputError(f"meshio cannot read this file{detail}", source=str(path)) from None


def _name(names: dict[int, str], tag: int, kind: str) -> str:
    return names.get(int(tag), f"{kind}{int(tag)}")
