"""The meridional mesh: the plain data object between a body-of-revolution geometry and the
axisymmetric model.

A body of revolution about the z axis is described by its section in the half-plane
(r, z), r >= 0: triangles with named regions, and named boundary edges. The edges on the
axis r = 0 carry the reserved name ``axis``; they are not a wall but the line where the
azimuthal field conditions apply.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .validate import check_coordinates

AXIS = "axis"


@dataclass(frozen=True)
class MeridionalMesh:
    points: np.ndarray          # (n_points, 2) float: r, z in metres
    triangles: np.ndarray       # (n_triangles, 3) int, counter-clockwise in (r, z)
    tri_region: np.ndarray      # (n_triangles,) int
    region_names: dict[str, int]
    edges: np.ndarray           # (n_edges, 2) int: named boundary edges (walls and the axis)
    edge_tag: np.ndarray        # (n_edges,) int
    wall_names: dict[str, int]  # includes AXIS when the section touches the axis
    source: str = "<memory>"
    # Curved (quadratic) triangles: (n_triangles, 6) node numbers, the corners (as in
    # ``triangles``) then the midpoints of the edges 01, 12, 20; corners come first in
    # ``points``. None for straight triangles.
    triangles6: np.ndarray | None = None

    @property
    def n_triangles(self) -> int:
        return int(self.triangles.shape[0])

    def bounding_size(self) -> float:
        """The larger of the section's extents in r and z, metres."""
        return float(np.max(self.points.max(axis=0) - self.points.min(axis=0)))

    def areas(self) -> np.ndarray:
        p = self.points[self.triangles]
        d1, d2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
        return (d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]) / 2


def checked_section(mesh: MeridionalMesh, unit_m: float = 1.0) -> MeridionalMesh:
    """The mesh with triangles turned counter-clockwise; InputError where it cannot be a
    meridional section (coordinates not finite or not of a part's size, points at r < 0,
    degenerate triangles, an axis edge off the axis). ``unit_m``: the file's unit, for the
    messages."""
    if mesh.points.shape[1] != 2 or mesh.triangles.shape[1] != 3:
        raise InputError("a meridional mesh needs (r, z) points and 3-node triangles",
                         source=mesh.source)
    check_coordinates(mesh.points, mesh.source, unit_m)
    size = mesh.bounding_size()
    r = mesh.points[:, 0]
    if r.min() < -1e-9 * size:
        raise InputError(f"the section reaches r = {r.min():.3g} m < 0; a body of revolution "
                         "is meshed on the half-plane r >= 0 (x is r, y is z)",
                         source=mesh.source)
    points = mesh.points.copy()
    points[np.abs(points[:, 0]) <= 1e-9 * size, 0] = 0.0   # exactly on the axis
    triangles = mesh.triangles.copy()
    area = MeridionalMesh(points, triangles, mesh.tri_region, mesh.region_names, mesh.edges,
                          mesh.edge_tag, mesh.wall_names).areas()
    if np.any(np.abs(area) <= 1e-14 * size**2):
        raise InputError(f"{int(np.sum(np.abs(area) <= 1e-14 * size**2))} degenerate "
                         "triangle(s) in the section", source=mesh.source)
    triangles[area < 0] = triangles[area < 0][:, [0, 2, 1]]
    triangles6 = None
    if mesh.triangles6 is not None:
        # turned over, edge 01 becomes 02 (the old 20), 12 stays 21, 20 becomes 10
        triangles6 = mesh.triangles6.copy()
        triangles6[area < 0] = triangles6[area < 0][:, [0, 2, 1, 5, 4, 3]]
    if AXIS in mesh.wall_names:
        on_axis = mesh.edges[mesh.edge_tag == mesh.wall_names[AXIS]]
        if on_axis.size and np.any(points[on_axis, 0] != 0.0):
            raise InputError("edges named 'axis' must lie on r = 0", source=mesh.source)
    return MeridionalMesh(points, triangles, mesh.tri_region, dict(mesh.region_names),
                          mesh.edges, mesh.edge_tag, dict(mesh.wall_names), mesh.source,
                          triangles6)
