"""Periodic cells need their two faces meshed alike: gmsh copies the mesh of each surface
of the first face onto its translate on the second (``setPeriodic`` with the translation),
so that every vertex, edge and triangle of one face has its partner on the other."""

from __future__ import annotations

import numpy as np

from ..errors import InputError


def copy_face_meshes(gmsh, walls: dict[int, str], pairs, tol: float, dim: int = 2) -> None:
    """For each (first, second) pair of wall names, make gmsh mesh the surfaces named
    ``second`` as translated copies of those named ``first`` (``walls``: surface tag ->
    name, before meshing); with ``dim`` = 1 the curves of a meridional section."""
    for first, second in pairs:
        sources = [t for t, name in walls.items() if name == first]
        targets = [t for t, name in walls.items() if name == second]
        if not sources or not targets:
            continue          # a face a symmetry cut removed: the model says so by name
        boxes = {t: np.reshape(gmsh.model.getBoundingBox(dim, t), (2, 3))
                 for t in sources + targets}
        shift = (_union_centre(boxes, targets) - _union_centre(boxes, sources))
        for target in targets:
            moved = [s for s in sources
                     if np.all(np.abs(boxes[s] + shift - boxes[target]) <= 10 * tol)]
            if len(targets) != len(sources) or not moved:
                raise InputError(f"the surface {second!r} is not a translate of {first!r}, so "
                                 "the two cannot be a periodic pair", field="periodic.pair")
            affine = np.eye(4)
            affine[:3, 3] = shift
            gmsh.model.mesh.setPeriodic(dim, [target], [moved[0]], affine.ravel().tolist())


def _union_centre(boxes: dict, tags: list[int]) -> np.ndarray:
    low = np.min([boxes[t][0] for t in tags], axis=0)
    high = np.max([boxes[t][1] for t in tags], axis=0)
    return (low + high) / 2
