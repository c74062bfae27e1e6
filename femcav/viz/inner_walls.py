"""Which boundary triangles of a part are its outer skin and which are metal inside it.

A tuning post, the inner conductor of a coaxial or re-entrant cavity, a gap or an iris is
boundary of the mesh like the enclosure, so a picture that draws the whole boundary opaque
shows a closed can and hides them. The enclosure's skin is the part of the boundary on the
part's convex hull; a boundary triangle off the hull (a post's side, the rod of a
re-entrant cavity, the face of a gap, a step of a housing) is inside the silhouette, and the
mesh picture draws it opaque behind a see-through skin.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import ConvexHull, QhullError


def off_hull(points: np.ndarray, triangles: np.ndarray) -> np.ndarray:
    """Per triangle: True where a corner lies off the convex hull of ``points``.

    The corners of the enclosure's skin lie on the hull even where the wall is curved (the
    mesher puts nodes on the wall, and a node of a convex wall is a hull point), so the test
    is on nodes, to a millionth of the part's size; a triangle with a corner inside the
    hull (a post's side next to the wall it enters through, a rod's face across a gap)
    belongs to a wall inside the part."""
    if len(triangles) == 0:
        return np.zeros(0, dtype=bool)
    used = np.unique(triangles)
    try:
        hull = ConvexHull(points[used])
    except QhullError:              # a flat or degenerate point set: all of it is skin
        return np.zeros(len(triangles), dtype=bool)
    extent = float(np.max(points[used].max(axis=0) - points[used].min(axis=0))) or 1.0
    # depth of each node inside the hull: the distance to the nearest hull plane
    depth = np.full(len(points), np.inf)
    block = points[used]
    nearest = np.full(len(used), np.inf)
    for start in range(0, len(hull.equations), 512):
        eq = hull.equations[start:start + 512]
        nearest = np.minimum(nearest, np.min(np.abs(block @ eq[:, :3].T + eq[:, 3]), axis=1))
    depth[used] = nearest
    return np.any(depth[triangles] > 1e-6 * extent, axis=1)
