"""Moving a mesh onto a slightly different part, without re-meshing: dimension derivatives.

A frequency difference between two independent meshes of nearly equal parts is mostly mesh
noise (each triangulation has its own discretisation error, about 1e-4 at usual sizes,
more than the effect of a 10 µm change). So the mesh of the part at parameter value p is
morphed onto the part at p ± δ: the same elements, the nodes moved. Each node on a wall or a
material interface lies on the surface of one or more of the layout's solids; it follows the
map that takes its solid at p onto the same solid at p ± δ (a box: affine along each axis; a
cylinder: affine along its axis and scaled across it). On a solid that does not change it
may only slide along that solid's surface (the edge of a layer where it meets a wall), else
it stays put (the rim where a changed puck rests on an unchanged support). Interior
nodes follow by harmonic extension (a piecewise-linear Laplace problem per coordinate, the
surface motion as boundary values), and curved elements' midside nodes off the surfaces
take the mean of their edge's ends. Then

    df/dp ≈ (f(p + δ) - f(p - δ)) / (2 δ),

with the two solves on one topology, so that their discretisation errors cancel to first
order and the difference is the derivative to O(δ²) plus the discretisation error of the
derivative itself.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .errors import InputError
from .geometry.params import moved_parameters
from .geometry.mesh import TaggedMesh
from .geometry.parts import Layout
from .geometry.solids import Box, Cylinder
from .post.mode_matching import result_partners

# δ relative to the part's extent for the central difference
STEP = 1e-3


def _solids(layout: Layout) -> list:
    return [*layout.space, *(s for _, s in layout.metal), *(s for _, s in layout.fills)]


def _map(old, new, p: np.ndarray) -> np.ndarray:
    """Points on solid ``old`` carried to the same place on solid ``new``."""
    if isinstance(old, Box):
        lo, size = np.asarray(old.corner, float), np.asarray(old.size, float)
        lo2, size2 = np.asarray(new.corner, float), np.asarray(new.size, float)
        return lo2 + (p - lo) * (size2 / size)
    base, axis = np.asarray(old.base, float), np.asarray(old.axis, float)
    base2, axis2 = np.asarray(new.base, float), np.asarray(new.axis, float)
    length, length2 = np.linalg.norm(axis), np.linalg.norm(axis2)
    along = (p - base) @ (axis / length)
    radial = (p - base) - np.outer(along, axis / length)
    return (base2 + np.outer(along * length2 / length, axis2 / length2)
            + radial * (new.radius / old.radius))


def _same(a, b) -> bool:
    return type(a) is type(b) and a == b


def surface_nodes(mesh: TaggedMesh) -> np.ndarray:
    """Nodes on the boundary or on a face between two regions (corners and midside)."""
    t = mesh.tets
    local = np.array([[0, 1, 2], [0, 1, 3], [0, 2, 3], [1, 2, 3]])
    faces = np.sort(t[:, local].reshape(-1, 3), axis=1)
    owner = np.repeat(np.arange(len(t)), 4)
    order = np.lexsort(faces.T[::-1])
    faces, owner = faces[order], owner[order]
    same_next = np.all(faces[1:] == faces[:-1], axis=1)
    shared = np.zeros(len(faces), bool)
    shared[1:] |= same_next
    shared[:-1] |= same_next
    interface = np.zeros(len(faces), bool)
    pair = np.flatnonzero(same_next)
    differs = mesh.tet_region[owner[pair]] != mesh.tet_region[owner[pair + 1]]
    interface[pair[differs]] = interface[pair[differs] + 1] = True
    on = faces[~shared | interface]
    nodes = set(np.unique(on).tolist())
    if mesh.tets10 is not None:      # midside nodes of edges on those faces
        edge_mid = {}
        for k, (a, b) in enumerate(((0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3))):
            for i, j, m in zip(mesh.tets10[:, a], mesh.tets10[:, b], mesh.tets10[:, 4 + k]):
                edge_mid[(min(i, j), max(i, j))] = m
        for f in on.tolist():
            for i, j in ((f[0], f[1]), (f[1], f[2]), (f[0], f[2])):
                nodes.add(edge_mid[(min(i, j), max(i, j))])
    return np.array(sorted(nodes), dtype=np.int64)


def morph(mesh: TaggedMesh, old: Layout, new: Layout) -> TaggedMesh:
    """``mesh`` (of layout ``old``) with its nodes moved onto layout ``new``."""
    solids_old, solids_new = _solids(old), _solids(new)
    if not all(isinstance(s, (Box, Cylinder)) for s in solids_old):
        raise InputError("the mesh can follow a change of boxes and cylinders only, and this "
                         "part has a curved profile; its dimension tolerances are not "
                         "available", field="tolerances")
    if len(solids_old) != len(solids_new) or any(
            type(a) is not type(b) for a, b in zip(solids_old, solids_new)):
        raise InputError("the change alters which solids make up the part, so the mesh "
                         "cannot follow it; re-mesh instead", field="tolerances")
    tol = 1e-6 * old.extent()
    p = mesh.points
    surface = surface_nodes(mesh)
    target = p[surface].copy()
    moved = np.zeros(len(surface))
    unchanged = []
    for a, b in zip(solids_old, solids_new):
        on = a.on_surface(p[surface], tol)
        if not on.any():
            continue
        if _same(a, b):
            unchanged.append((a, on))
            continue
        shifted = _map(a, b, p[surface[on]])
        target[on] = np.where(moved[on, None] > 0,
                              (target[on] * moved[on, None] + shifted) / (moved[on, None] + 1),
                              shifted)
        moved[on] += 1
    # A node on an unchanged solid may slide along that solid's surface (the edge of a
    # layer where it meets a wall) but not leave it (the rim of a support under a puck
    # whose radius changes): then it stays put.
    for a, on in unchanged:
        leaves = on & ~a.on_surface(target, tol)
        target[leaves] = p[surface[leaves]]
    displacement = np.zeros_like(p)
    displacement[surface] = target - p[surface]
    n_corners = int(mesh.tets.max()) + 1
    corner_surface = surface[surface < n_corners]
    displacement[:n_corners] = _harmonic(mesh, n_corners, corner_surface,
                                         displacement[corner_surface])
    if mesh.tets10 is not None:
        on_surface = np.zeros(len(p), bool)
        on_surface[surface] = True
        for k, (a, b) in enumerate(((0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3))):
            mid = mesh.tets10[:, 4 + k]
            inner = ~on_surface[mid]
            displacement[mid[inner]] = 0.5 * (displacement[mesh.tets10[inner, a]]
                                              + displacement[mesh.tets10[inner, b]])
    out = replace(mesh, points=p + displacement)
    if np.any(out.tet_volumes() * np.sign(mesh.tet_volumes()) <= 0):
        raise InputError("the change is too large for the mesh to follow (an element turned "
                         "inside out); use a smaller step", field="tolerances")
    return out


def _harmonic(mesh: TaggedMesh, n: int, known: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Piecewise-linear harmonic extension of ``values`` at nodes ``known`` to all corners."""
    from skfem import Basis, ElementTetP1, MeshTet, asm
    from skfem.models.poisson import laplace

    basis = Basis(MeshTet(np.ascontiguousarray(mesh.points[:n].T),
                          np.ascontiguousarray(mesh.tets.T)), ElementTetP1())
    A = asm(laplace, basis).tocsr()
    free = np.setdiff1d(np.arange(n), known)
    out = np.zeros((n, 3))
    out[known] = values
    if free.size:
        rhs = -A[free][:, known] @ values
        out[free] = spla.splu(sp.csc_matrix(A[free][:, free])).solve(rhs)
    return out


def solve_morphed(task):
    """A cluster task: the case's tables, a morphed mesh and the solve options in, the
    solved modes out."""
    from .case import case_from_data
    data, path, mesh, options = task
    return _solve_morphed(case_from_data(data, path), mesh, options)


def _solve_morphed(case, mesh, options: dict):
    from .case import case_model
    from .solver import solve_model
    return solve_model(case_model(case, mesh), **options)


def parameter_step(layout: Layout) -> float:
    return STEP * layout.extent()


def dimension_derivatives(case, result, names, progress=None,
                          pool=None) -> dict[str, list[float]]:
    """df/dp (Hz/m) of every mode of ``result`` (a 3D solve of ``case``, one symmetry class)
    for each builder length ``names`` (e.g. "radius", "block_corner[0]"), by central
    differences on morphed meshes; the morphed solves run here, or all at once on the
    cluster of ``pool`` (femcav.study.cluster.ClusterPool; each task the case's tables and
    its morphed mesh)."""
    from .geometry import builder_layout

    g = case.geometry
    old = builder_layout(g.builder, g.parameters)
    mesh = result.space.model.mesh
    step = parameter_step(old)
    options = dict(modes=len(result.modes) + 3, near_hz=result.near_hz, form=result.form,
                   order=result.order)
    meshes = []                     # the morphed meshes for + δ, then - δ, per name
    for name in names:
        for sign in (+1, -1):
            params = moved_parameters(g.parameters, name, sign * step)
            meshes.append(morph(mesh, old, builder_layout(g.builder, params)))
    solved = solve_morphed_meshes(case, meshes, options, pool)
    out = {}
    for name in names:
        frequencies = [partner_frequencies(result, next(solved)) for _ in (+1, -1)]
        out[name] = [(fp - fm) / (2 * step) for fp, fm in zip(*frequencies)]
        if progress:
            progress.step(f"tolerances: df/d{name} from two morphed meshes (step "
                          f"{step * 1e6:.3g} µm)")
    return out


def solve_morphed_meshes(case, meshes: list, options: dict, pool=None):
    """The solves of ``case`` on each of ``meshes``, in order (an iterator): here one at a
    time as they are used (one solve in memory), or all at once on the cluster of
    ``pool``."""
    if pool is None:
        return (_solve_morphed(case, m, options) for m in meshes)
    from .case import read_case_data
    data = read_case_data(case.path)
    return iter(pool.gather(solve_morphed, [(data, case.path, m, options) for m in meshes]))


def partner_frequencies(result, moved) -> list[float]:
    """The frequency in ``moved`` of each mode of ``result`` (followed by its field; NaN for
    a mode without a partner)."""
    partner = result_partners(result, moved)
    successor = {int(p): j for j, p in enumerate(partner) if p >= 0}
    return [moved.modes[successor[k]].frequency_hz if k in successor else np.nan
            for k in range(len(result.modes))]
