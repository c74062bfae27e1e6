"""The tagged tetrahedral mesh: the plain data object between geometry and model."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

# the four faces of a tetrahedron, as the local indices of their vertices (face i is
# opposite vertex i)
TET_FACES = np.array([[1, 2, 3], [0, 2, 3], [0, 1, 3], [0, 1, 2]])


@dataclass(frozen=True)
class TaggedMesh:
    """A tetrahedral mesh in metres with named volume regions and named surface patches.

    ``tet_region[i]`` is the region id of tetrahedron ``i``; ``region_names`` maps names to
    ids. ``faces`` are the triangles of named surfaces (walls) with ids in ``face_tag``,
    named by ``wall_names``. Faces on the boundary that carry no name are not listed.
    """

    points: np.ndarray          # (n_points, 3) float, metres; corners first
    tets: np.ndarray            # (n_tets, 4) int
    tet_region: np.ndarray      # (n_tets,) int
    region_names: dict[str, int]
    faces: np.ndarray           # (n_faces, 3) int
    face_tag: np.ndarray        # (n_faces,) int
    wall_names: dict[str, int]
    source: str = "<memory>"
    # Curved (quadratic) tetrahedra: (n_tets, 10) node numbers, corners then the midpoints
    # of the edges 01, 12, 02, 03, 13, 23 (VTK order); None for straight tetrahedra.
    tets10: np.ndarray | None = None

    @property
    def n_tets(self) -> int:
        return int(self.tets.shape[0])

    def tet_volumes(self) -> np.ndarray:
        p = self.points[self.tets]
        return np.einsum("ij,ij->i", np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]),
                         p[:, 3] - p[:, 0]) / 6.0

    def boundary_face_keys(self) -> set[tuple[int, int, int]]:
        """Sorted vertex triples of the faces that belong to exactly one tetrahedron."""
        faces = np.sort(self.tets[:, [[0, 1, 2], [0, 1, 3], [0, 2, 3], [1, 2, 3]]]
                        .reshape(-1, 3), axis=1)
        unique, counts = np.unique(faces, axis=0, return_counts=True)
        return set(map(tuple, unique[counts == 1].tolist()))

    def bounding_size(self) -> float:
        """The largest extent of the mesh along x, y or z, metres."""
        return float(np.max(self.points.max(axis=0) - self.points.min(axis=0)))
