"""Which convergence rate an error bar may assume: does the part have field singularities?

Nédélec elements of order k give eigenvalue errors ∝ h^(2k) only where the field is smooth.
At a re-entrant metal edge of interior angle 3π/2 the field grows like ρ^(-1/3), and the
eigenvalue error falls only like h^(4/3) (D. Boffi, "Finite element approximation of eigenvalue
problems", Acta Numerica 19 (2010) 1-120; from memory). The edges and corners of a dielectric
insert do the same, at a rate set by the contrast: our axisymmetric solver measured h^1.25 for
the TM01δ mode of an ε_r = 24 puck (DR fixture, order 3, meshes without corner grading,
femcav/geometry/section.py). Coarse meshes hide this: there the frequencies of such a part
can converge at the smooth rate and then slow down, so a bar that believes the smooth rate
is too small (DR fixture, order 2, 2.9 / 2.2 / 1.6 mm: observed rates 3.9 and 5.6, true
errors 1.1 and 2.3 times the bars).

So a part with more than one material, or with a sharp re-entrant boundary edge, gets the
rate SINGULAR_RATE for its bars; an empty cavity with convex walls keeps 2k.
"""

from __future__ import annotations

import numpy as np

SINGULAR_RATE = 4.0 / 3.0
# A boundary edge counts as re-entrant when the wall turns into the cavity by more than this
# (a faceted curved wall turns by 2π / facets, which stays below it on any usable mesh).
REENTRANT_TURN_DEG = 60.0


def bar_rate(model, order: int) -> float:
    """The theoretical rate of the frequency error for the error bars of ``model``."""
    smooth = 2.0 * order
    return min(smooth, SINGULAR_RATE) if has_singularities(model) else smooth


def has_singularities(model) -> bool:
    """More than one material, or a sharp re-entrant wall: a 3D model's mesh (``mesh``) or a
    body of revolution's meridional section (``section``)."""
    if _mixed_materials(model):
        return True
    section = getattr(model, "section", None)
    return (_has_reentrant_corner(section) if section is not None
            else _has_reentrant_edge(model.mesh))


def _mixed_materials(model) -> bool:
    kinds = {(m.eps_r if not callable(m.eps_r) else id(m.eps_r), m.mu_r)
             for m in model.materials.values()}
    return len(kinds) > 1


def _has_reentrant_edge(mesh) -> bool:
    """Two boundary faces meeting at an edge where the domain's surface folds inward."""
    tets, p = mesh.tets, mesh.points
    local = np.array([[0, 1, 2, 3], [0, 1, 3, 2], [0, 2, 3, 1], [1, 2, 3, 0]])
    faces = tets[:, local].reshape(-1, 4)           # three face vertices, then the opposite
    keys = np.sort(faces[:, :3], axis=1)
    _, first, counts = np.unique(keys, axis=0, return_index=True, return_counts=True)
    boundary = faces[first[counts == 1]]
    a, b, c, opposite = (p[boundary[:, i]] for i in range(4))
    normal = np.cross(b - a, c - a)
    normal /= np.linalg.norm(normal, axis=1)[:, None]
    normal *= np.where(np.einsum("ij,ij->i", normal, opposite - a) > 0, -1.0, 1.0)[:, None]
    # pair the faces across each of their edges
    edges = np.concatenate([boundary[:, [0, 1]], boundary[:, [1, 2]], boundary[:, [0, 2]]])
    far = np.concatenate([boundary[:, 2], boundary[:, 0], boundary[:, 1]])
    owner = np.tile(np.arange(len(boundary)), 3)
    edge_keys = np.sort(edges, axis=1)
    order = np.lexsort((edge_keys[:, 1], edge_keys[:, 0]))
    sorted_keys = edge_keys[order]
    same = np.all(sorted_keys[1:] == sorted_keys[:-1], axis=1)
    i, j = order[:-1][same], order[1:][same]
    # re-entrant: the other face's far vertex lies on the outward side of this face's plane
    out_of_plane = np.einsum("ij,ij->i", p[far[j]] - p[edges[i, 0]], normal[owner[i]])
    size = mesh.bounding_size()
    cos_turn = np.einsum("ij,ij->i", normal[owner[i]], normal[owner[j]])
    sharp = cos_turn < np.cos(np.radians(REENTRANT_TURN_DEG))
    return bool(np.any(sharp & (out_of_plane > 1e-9 * size)))


def _has_reentrant_corner(section) -> bool:
    """A boundary vertex of the meridional section where the domain's interior angle (the
    sum of its triangles' angles there) exceeds π by more than REENTRANT_TURN_DEG: the
    section of a re-entrant edge of the revolved part (a straight or curved wall has π)."""
    p, tri = section.points, section.triangles
    angles = np.zeros(len(p))
    for k in range(3):
        a, b, c = p[tri[:, k]], p[tri[:, (k + 1) % 3]], p[tri[:, (k + 2) % 3]]
        u, v = b - a, c - a
        cos = np.einsum("ij,ij->i", u, v) / (np.linalg.norm(u, axis=1)
                                             * np.linalg.norm(v, axis=1))
        np.add.at(angles, tri[:, k], np.arccos(np.clip(cos, -1.0, 1.0)))
    edges = np.sort(np.concatenate([tri[:, [0, 1]], tri[:, [1, 2]], tri[:, [2, 0]]]), axis=1)
    keys, counts = np.unique(edges, axis=0, return_counts=True)
    boundary = np.unique(keys[counts == 1])
    return bool(np.any(angles[boundary] > np.pi + np.radians(REENTRANT_TURN_DEG)))
