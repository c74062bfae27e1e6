"""Boundary faces that are not on the outside of the part: cracks and sheets.

A triangle that belongs to one tetrahedron only is a boundary face, and an unnamed boundary
face is PEC (the enclosure is metal). When two regions were meshed with their own copies of
the interface nodes, or the nodes of an interface were duplicated over part of it, those
faces have mesh volume on both sides: the solver then sees a metal sheet that the user never
drew. Each face is tested two ways: after merging coincident nodes it may coincide with
another boundary face (duplicated nodes), or a point just outside it, along its outward
normal, may lie inside another tetrahedron (meshes that do not match across an interface).
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import chain

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from .mesh import TET_FACES, TaggedMesh

FACES = TET_FACES
# Nodes closer than this share of the mesh's extent are one node (files keep 8 or more digits).
MERGE_SHARE = 1e-9
# The probe sits this share of the face's inradius outside it: far enough that rounding
# (1e-16 relative) cannot put it inside, close enough that no genuine outer surface of a
# valid mesh has volume there.
PROBE_SHARE = 1e-2
INSIDE_TOLERANCE = 1e-9   # on barycentric coordinates


@dataclass(frozen=True)
class InnerFaces:
    faces: np.ndarray        # (k, 3) node numbers of the boundary faces with volume beyond them
    named: np.ndarray        # (k,) bool: carries a wall name, directly or through its twin
    twin_tag: np.ndarray     # (k,) the wall tag of a named twin across a crack, else -1


def inner_faces(mesh: TaggedMesh, once: np.ndarray) -> InnerFaces:
    """The boundary faces with mesh volume beyond them; ``once`` numbers the faces that
    belong to one tetrahedron, as rows of ``tets[:, FACES].reshape(-1, 3)``."""
    owner = once // 4
    faces = mesh.tets[:, FACES].reshape(-1, 3)[once]
    opposite = mesh.tets[owner, once % 4]
    if len(faces) == 0:
        return InnerFaces(np.zeros((0, 3), np.int64), np.zeros(0, bool), np.zeros(0, int))
    merged = _merged_nodes(mesh.points, np.unique(faces), MERGE_SHARE * mesh.bounding_size())
    keys = np.sort(merged[faces], axis=1)
    _, which, counts = np.unique(keys, axis=0, return_inverse=True, return_counts=True)
    which = which.reshape(-1)
    twinned = counts[which] > 1
    probed = ~twinned
    probed[probed] = _beyond_is_inside(mesh, faces[probed], owner[probed], opposite[probed])
    inner = twinned | probed

    named_tag = np.full(len(counts), -1)
    if len(mesh.faces):
        named_keys = np.sort(merged_or_self(merged, mesh.faces), axis=1)
        key_index = {tuple(k): i for i, k in enumerate(np.unique(keys, axis=0).tolist())}
        for key, tag in zip(named_keys.tolist(), mesh.face_tag.tolist()):
            if tuple(key) in key_index:
                named_tag[key_index[tuple(key)]] = tag
    tags = named_tag[which[inner]]
    own = np.zeros(len(faces), bool)
    if len(mesh.faces):
        own_keys = {tuple(k) for k in np.sort(mesh.faces, axis=1).tolist()}
        own = np.array([tuple(f) in own_keys for f in np.sort(faces, axis=1).tolist()])
    return InnerFaces(faces=faces[inner], named=tags >= 0,
                      twin_tag=np.where(own[inner], -1, tags))


def merged_or_self(merged: np.ndarray, faces: np.ndarray) -> np.ndarray:
    """Node numbers after merging; nodes that were not merged (not on the boundary) keep
    their own number, which no boundary node has."""
    out = faces.copy()
    known = faces < len(merged)
    out[known] = merged[faces[known]]
    out[~known] = -1 - faces[~known]
    return out


def _merged_nodes(points: np.ndarray, nodes: np.ndarray, tol: float) -> np.ndarray:
    """For every node number up to the largest of ``nodes``, a label shared by coincident
    nodes among ``nodes`` (other numbers keep their own)."""
    labels = np.arange(int(nodes.max()) + 1)
    pairs = cKDTree(points[nodes]).query_pairs(tol, output_type="ndarray")
    if len(pairs):
        graph = sp.coo_matrix((np.ones(len(pairs)), (pairs[:, 0], pairs[:, 1])),
                              shape=(len(nodes), len(nodes)))
        _, component = connected_components(graph, directed=False)
        labels[nodes] = nodes[np.unique(component, return_index=True)[1]][component]
    return labels


def _beyond_is_inside(mesh: TaggedMesh, faces, owner, opposite) -> np.ndarray:
    """Whether a point just outside each face (along the normal away from its tetrahedron)
    lies inside a tetrahedron that touches the boundary."""
    p = mesh.points
    a, b, c = p[faces[:, 0]], p[faces[:, 1]], p[faces[:, 2]]
    normal = np.cross(b - a, c - a)
    double_area = np.linalg.norm(normal, axis=1)
    normal /= double_area[:, None]
    normal[np.einsum("ij,ij->i", normal, p[opposite] - a) > 0] *= -1
    perimeter = (np.linalg.norm(b - a, axis=1) + np.linalg.norm(c - b, axis=1)
                 + np.linalg.norm(a - c, axis=1))
    probe = (a + b + c) / 3 + (PROBE_SHARE * double_area / perimeter)[:, None] * normal

    # Candidates: tetrahedra with a vertex on the boundary (a point just beyond a face lies in
    # one of those if anywhere), grouped by size so that each ball search stays small.
    on_boundary = np.zeros(p.shape[0], bool)
    on_boundary[faces.reshape(-1)] = True
    on_boundary[np.unique(mesh.tets[owner])] = True
    near = np.flatnonzero(on_boundary[mesh.tets].any(axis=1))
    corners = p[mesh.tets[near]]
    centre = corners.mean(axis=1)
    radius = np.max(np.linalg.norm(corners - centre[:, None], axis=2), axis=1)
    size_class = np.floor(np.log2(radius)).astype(int)
    hit = np.zeros(len(faces), bool)
    for cls in np.unique(size_class):
        members = np.flatnonzero(size_class == cls)
        found = cKDTree(centre[members]).query_ball_point(probe, radius[members].max())
        lengths = np.fromiter(map(len, found), int, len(found))
        if not lengths.any():
            continue
        which = np.repeat(np.arange(len(faces)), lengths)
        tets = near[members[np.fromiter(chain.from_iterable(found), int, lengths.sum())]]
        inside = _contains(p[mesh.tets[tets]], probe[which]) & (tets != owner[which])
        hit[which[inside]] = True
    return hit


def _contains(corners: np.ndarray, points: np.ndarray) -> np.ndarray:
    """Whether each point lies in its tetrahedron (barycentric coordinates >= -tolerance)."""
    edges = np.stack([corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0],
                      corners[:, 3] - corners[:, 0]], axis=2)
    lam = np.linalg.solve(edges, (points - corners[:, 0])[:, :, None])[:, :, 0]
    return np.all(lam >= -INSIDE_TOLERANCE, axis=1) & (lam.sum(axis=1) <= 1 + INSIDE_TOLERANCE)
