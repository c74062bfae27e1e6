"""Read a meridional section (2D triangles in the (r, z) plane) from a mesh file.

The same reading as for 3D meshes (importer.py): gmsh ``.msh`` with physical surface groups
naming regions and physical curve groups naming walls; x is r >= 0 and y is z; 3-node or
6-node (curved) triangles. Boundary edges on r = 0 are named ``axis`` whatever the file says.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError
from .importer import _name, corners_first, group_names, read_mesh_file, split_blocks
from .meridional import AXIS, MeridionalMesh, checked_section
from .validate import check_coordinates


def read_section(path: str | Path, *, scale: float = 1.0) -> MeridionalMesh:
    path = Path(path)
    raw = read_mesh_file(path)
    names = group_names(raw, (1, 2))
    cells, tri_tags, edges, edge_tags = split_blocks(
        raw, path, ("triangle", "triangle6"), ("line", "line3"), 2,
        missing="the mesh has no triangles (a meridional section needs them)",
        mixed="the mesh mixes straight (3-node) and curved (6-node) triangles; use one kind",
        refused=("tetra", "hexa", "wedge", "pyramid"),
        refusal="the mesh has 3D cells; a meridional section is 2D triangles in the (r, z) "
                "plane")
    coords = np.asarray(raw.points, dtype=float) * scale
    check_coordinates(coords[np.unique(cells)], str(path), scale)
    if coords.shape[1] == 3 and np.any(np.abs(coords[:, 2]) > 1e-9 * np.ptp(coords[:, :2])):
        raise InputError("the section must lie in the plane z = 0 (x is r, y is z)",
                         source=str(path))
    used, renumber = corners_first(cells, 3, coords.shape[0])
    cells = renumber[cells]
    region_names = {_name(names[2], t, "region"): int(t) for t in np.unique(tri_tags)}

    edges = renumber[edges]
    keep = np.all(edges >= 0, axis=1)
    edges, edge_tags = edges[keep], edge_tags[keep]
    wall_names = {_name(names[1], t, "wall"): int(t) for t in np.unique(edge_tags)}
    points = coords[used, :2]
    # the axis: boundary edges with both ends on r = 0, tagged whatever the file said
    size = float(np.max(np.ptp(points, axis=0)))
    on_axis_edges = _boundary_edges(cells[:, :3])
    on_axis_edges = on_axis_edges[np.all(np.abs(points[on_axis_edges, 0]) <= 1e-9 * size,
                                         axis=1)]
    if on_axis_edges.size:
        axis_tag = max([*wall_names.values(), 0]) + 1
        named = {tuple(e) for e in np.sort(on_axis_edges, axis=1).tolist()}
        off = np.array([tuple(e) not in named for e in np.sort(edges, axis=1).tolist()],
                       dtype=bool)
        edges = np.vstack([edges[off], on_axis_edges])
        edge_tags = np.concatenate([edge_tags[off], np.full(len(on_axis_edges), axis_tag)])
        wall_names = {n: t for n, t in wall_names.items() if t in set(edge_tags.tolist())}
        wall_names[AXIS] = axis_tag
    mesh = MeridionalMesh(points=points, triangles=cells[:, :3], tri_region=tri_tags,
                          region_names=region_names, edges=edges, edge_tag=edge_tags,
                          wall_names=wall_names, source=str(path),
                          triangles6=cells if cells.shape[1] == 6 else None)
    return checked_section(mesh, scale)


def _boundary_edges(triangles: np.ndarray) -> np.ndarray:
    edges = np.sort(triangles[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2), axis=1)
    unique, counts = np.unique(edges, axis=0, return_counts=True)
    return unique[counts == 1]
