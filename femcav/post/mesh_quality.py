"""Shape quality and size of the tetrahedra of a mesh, per region.

The shape measure is the mean ratio

    q = 12 (3 |V|)^(2/3) / sum of the six squared edge lengths,

which is 1 for the regular tetrahedron and falls towards 0 as a tetrahedron flattens into a
plane or collapses onto a line (A. Liu and B. Joe, "Relationship between tetrahedron shape
measures", BIT 34 (1994) 268-287; the same quantity is the mean-ratio metric of P. M. Knupp,
"Algebraic mesh quality metrics", SIAM J. Sci. Comput. 23 (2001) 193-218; formula and
references from memory). It does not depend on the size, position or orientation of the
element, so one threshold serves every region and every unit. Badly shaped tetrahedra make
the edge-element matrices ill-conditioned and the local error large, which is why the mesh
command reports the worst one.

The "size" of a region is its mean edge length: the length the mesh_size setting aims at.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..geometry.mesh import TaggedMesh

# The six edges of a tetrahedron as pairs of its local vertices.
EDGES = np.array([[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]])


@dataclass(frozen=True)
class RegionQuality:
    name: str
    tetrahedra: int
    mean_edge_m: float      # mean length of the region's distinct edges, metres
    min_quality: float


@dataclass(frozen=True)
class MeshQuality:
    tetrahedra: int
    nodes: int
    min_quality: float
    worst_region: str       # the region holding the tetrahedron of least quality
    regions: tuple[RegionQuality, ...]   # in region-id order
    quality: np.ndarray     # (n_tets,) mean ratio of every tetrahedron


def mean_ratio(points: np.ndarray, tets: np.ndarray) -> np.ndarray:
    """The mean-ratio quality of each tetrahedron, in [0, 1]; orientation does not matter."""
    p = np.asarray(points, dtype=float)[np.asarray(tets)]
    volume = np.abs(np.einsum("ij,ij->i", np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]),
                              p[:, 3] - p[:, 0])) / 6.0
    squared = np.sum((p[:, EDGES[:, 1]] - p[:, EDGES[:, 0]]) ** 2, axis=(1, 2))
    with np.errstate(divide="ignore", invalid="ignore"):
        q = 12.0 * (3.0 * volume) ** (2.0 / 3.0) / squared
    # All four corners at one point: no shape at all, the worst value rather than NaN.
    return np.where(squared > 0, np.minimum(q, 1.0), 0.0)


def mean_edge_length(points: np.ndarray, tets: np.ndarray) -> float:
    """Mean length of the distinct edges of ``tets`` (an edge shared by many counts once)."""
    if len(tets) == 0:
        return float("nan")
    edges = np.unique(np.sort(np.asarray(tets)[:, EDGES].reshape(-1, 2), axis=1), axis=0)
    return float(np.mean(np.linalg.norm(points[edges[:, 1]] - points[edges[:, 0]], axis=1)))


def mesh_quality(mesh: TaggedMesh) -> MeshQuality:
    quality = mean_ratio(mesh.points, mesh.tets)
    regions = []
    for name, region_id in sorted(mesh.region_names.items(), key=lambda item: item[1]):
        inside = mesh.tet_region == region_id
        regions.append(RegionQuality(
            name=name, tetrahedra=int(np.count_nonzero(inside)),
            mean_edge_m=mean_edge_length(mesh.points, mesh.tets[inside]),
            min_quality=float(quality[inside].min()) if inside.any() else float("nan")))
    worst = int(np.argmin(quality))
    worst_id = int(mesh.tet_region[worst])
    worst_region = next(name for name, rid in mesh.region_names.items() if rid == worst_id)
    return MeshQuality(tetrahedra=mesh.n_tets, nodes=int(mesh.points.shape[0]),
                       min_quality=float(quality[worst]), worst_region=worst_region,
                       regions=tuple(regions), quality=quality)
