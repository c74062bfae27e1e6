"""A cavity assembled from solids in gmsh (OpenCASCADE), cut by symmetry planes, meshed with
sizes per region, and returned with named regions and walls.

A :class:`Layout` says what the cavity is: the space (the union of some solids), metal parts
removed from it (their surfaces become named walls), dielectric fills inside it (named
regions; a later fill wins where fills overlap, so a hole in a puck is a later fill of air),
and how the remaining outer surfaces are named. Every builder produces a Layout; this module
does the rest, so that all builders share one path to a mesh.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from .gmsh_session import gmsh_model, write_and_read
from .mesh import TaggedMesh
from .mesh_budget import check_mesh_budget
from .periodic_faces import copy_face_meshes
from .solids import Box, Solid

AXES = "xyz"


# Without a [mesh] size: elements this fraction of the part's extent.
DEFAULT_SIZE_FRACTION = 0.1


@dataclass(frozen=True)
class Layout:
    space: list[Solid]
    background: str                                   # region of the space no fill covers
    metal: list[tuple[str, Solid]] = field(default_factory=list)
    fills: list[tuple[str, Solid]] = field(default_factory=list)
    # name of an outer surface from points on it (n, 3) -> name or "" (unnamed, PEC)
    outer_wall: Callable[[np.ndarray], str] = lambda points: ""
    feature_size: float | None = None                 # smallest gap, if the part has one
    description: str = ""

    def extent(self) -> float:
        lo, hi = self.bounds()
        return float(np.max(hi - lo))

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        pairs = [s.bounds() for s in self.space]
        return np.min([p[0] for p in pairs], axis=0), np.max([p[1] for p in pairs], axis=0)


@dataclass(frozen=True)
class Sizing:
    """Target element sizes in metres: one global, optional per region, edge refinement."""

    size: float
    region_sizes: dict[str, float] = field(default_factory=dict)
    edge_factor: float = 0.5   # size at metal edges relative to the local size (1 = off)
    curved: bool = False       # quadratic (10-node) tetrahedra that follow curved surfaces
    # the element order the mesh will be solved at: the element budget (mesh_budget.py) then
    # keeps memory for that solve; None: for meshing alone
    solve_order: int | None = None
    # (first, second) wall names: the second face meshed as a copy of the first, moved onto
    # it (a periodic cell: geometry.periodic_faces)
    periodic_faces: tuple[tuple[str, str], ...] = ()
    # size at the edges of dielectric fills (a puck's rims) relative to the smallest region
    # size, where the field is singular (1 = off; set by femcav.accuracy_plan)
    fill_edge_factor: float = 1.0


def symmetry_wall_name(axis: str) -> str:
    return f"symmetry_{axis}"


def mesh_layout(layout: Layout, sizing: Sizing, cuts: dict[str, float] | None = None,
                name: str = "part") -> TaggedMesh:
    """Mesh ``layout``; ``cuts`` maps an axis to a plane position: the model keeps the side at
    or above the plane, and the cut face becomes the wall ``symmetry_<axis>``."""
    cuts = cuts or {}
    check_mesh_budget(layout, sizing, cuts)
    tol = 1e-7 * layout.extent()
    with gmsh_model(name) as gmsh:
        occ = gmsh.model.occ
        space = [(3, s.add_to(occ)) for s in layout.space]
        if len(space) > 1:
            space, _ = occ.fuse(space[:1], space[1:])
        if layout.metal:
            space, _ = occ.cut(space, [(3, m.add_to(occ)) for _, m in layout.metal])
        if cuts:
            lo, hi = layout.bounds()
            margin = layout.extent()
            lo, hi = lo - margin, hi + margin
            for axis, position in cuts.items():
                i = AXES.index(axis)
                corner, size = lo.copy(), hi - lo
                corner[i], size[i] = position, hi[i] - position
                space, _ = occ.intersect(space, [(3, Box(tuple(corner), tuple(size)).add_to(occ))])
        region_of = fragment_by_fills(occ, layout, space,
                                      [(3, f.add_to(occ)) for _, f in layout.fills])
        occ.synchronize()

        walls = _name_walls(gmsh, layout, cuts, tol)
        _set_sizes(gmsh, layout, sizing, region_of, walls)
        copy_face_meshes(gmsh, walls, sizing.periodic_faces, tol)
        gmsh.model.mesh.generate(3)
        if sizing.curved:
            # Second-order nodes placed on the CAD surfaces: the elements follow curved walls
            # and interfaces instead of cutting them with flat facets.
            gmsh.model.mesh.setOrder(2)
        for region in dict.fromkeys(region_of.values()):
            gmsh.model.addPhysicalGroup(3, [t for t, r in region_of.items() if r == region],
                                        name=region)
        for wall in sorted(set(walls.values()) - {""}):
            gmsh.model.addPhysicalGroup(2, [t for t, w in walls.items() if w == wall], name=wall)
        return write_and_read(gmsh, source=layout.description or name)


def fragment_by_fills(occ, layout: Layout, space: list, fills: list) -> dict[int, str]:
    """Fragment the space (dim-tags) by the fills (dim-tags, in layout.fills order) and name
    the pieces: a later fill wins; pieces outside the space are removed. Returns the region
    name per entity tag of the space's dimension."""
    if not fills:
        return {t: layout.background for _, t in space}
    dim = space[0][0]
    _, pieces = occ.fragment(space, fills)
    kept = {t for dimtags in pieces[:len(space)] for _, t in dimtags}
    region_of = dict.fromkeys(kept, layout.background)
    for (region, _), dimtags in zip(layout.fills, pieces[len(space):]):
        for _, t in dimtags:
            if t in kept:
                region_of[t] = region
    stray = [(dim, t) for _, t in occ.getEntities(dim) if t not in kept]
    if stray:
        occ.remove(stray, recursive=True)
    return region_of


def _boundary_surfaces(gmsh) -> list[int]:
    out = []
    for _, tag in gmsh.model.getEntities(2):
        up, _ = gmsh.model.getAdjacencies(2, tag)
        if len(up) == 1:
            out.append(tag)
    return out


def points_on_surface(gmsh, tag: int, n: int = 7) -> np.ndarray:
    """A few points on a (trimmed) surface, from a grid over its parametrisation."""
    (u0, v0), (u1, v1) = np.reshape(gmsh.model.getParametrizationBounds(2, tag), (2, 2))
    samples = [(u0 + (u1 - u0) * (i + 0.5) / n, v0 + (v1 - v0) * (j + 0.5) / n)
               for i in range(n) for j in range(n)]
    inside = [uv for uv in samples if gmsh.model.isInside(2, tag, list(uv), parametric=True)]
    uv = inside or samples
    xyz = gmsh.model.getValue(2, tag, [c for pair in uv for c in pair])
    return np.reshape(xyz, (-1, 3))


def _name_walls(gmsh, layout: Layout, cuts: dict[str, float], tol: float) -> dict[int, str]:
    walls = {}
    for tag in _boundary_surfaces(gmsh):
        p = points_on_surface(gmsh, tag)
        name = ""
        for axis, position in cuts.items():
            if np.all(np.abs(p[:, AXES.index(axis)] - position) <= tol):
                name = symmetry_wall_name(axis)
        if not name:
            for metal_name, solid in layout.metal:
                if np.all(solid.on_surface(p, tol)):
                    name = metal_name
                    break
        if not name:
            name = layout.outer_wall(p)
        walls[tag] = name
    return walls


def _set_sizes(gmsh, layout: Layout, sizing: Sizing, region_of: dict[int, str],
               walls: dict[int, str]) -> None:
    """A background field: the smallest of the per-region sizes and the edge refinement."""
    field_ids = region_size_fields(gmsh, sizing, region_of, "VolumesList")
    metal_names = {n for n, _ in layout.metal}
    metal_faces = [t for t, w in walls.items() if w in metal_names]
    near = sizing.size * sizing.edge_factor
    if layout.feature_size:
        near = min(near, layout.feature_size / 3)  # at least three elements across a gap
    if metal_faces and near < sizing.size:
        curves = sorted({abs(c) for t in metal_faces
                         for _, c in gmsh.model.getBoundary([(2, t)], oriented=False)})
        distance = gmsh.model.mesh.field.add("Distance")
        gmsh.model.mesh.field.setNumbers(distance, "CurvesList", curves)
        gmsh.model.mesh.field.setNumber(distance, "Sampling", 50)
        threshold = gmsh.model.mesh.field.add("Threshold")
        gmsh.model.mesh.field.setNumber(threshold, "InField", distance)
        gmsh.model.mesh.field.setNumber(threshold, "SizeMin", near)
        gmsh.model.mesh.field.setNumber(threshold, "SizeMax", sizing.size)
        gmsh.model.mesh.field.setNumber(threshold, "DistMin", near)
        gmsh.model.mesh.field.setNumber(threshold, "DistMax", 4 * sizing.size)
        field_ids.append(threshold)
    if sizing.fill_edge_factor < 1:
        field_ids += _fill_edge_refinement(gmsh, layout, sizing, region_of)
    use_smallest(gmsh, field_ids, sizing.size, ("Algorithm3D", 1))


def _fill_edge_refinement(gmsh, layout: Layout, sizing: Sizing, region_of: dict[int, str]
                          ) -> list[int]:
    """A threshold field towards the edges of the fills' boundaries: the field of a mode
    grows without bound at the edge of a dielectric body, and its frequency converges only
    like h^(4/3) there (post.singularity) unless the elements shrink towards the edge."""
    fills = [t for t, r in region_of.items() if r != layout.background]
    if not fills:
        return []
    surfaces = {abs(s) for v in fills for _, s in gmsh.model.getBoundary([(3, v)],
                                                                          oriented=False)}
    curves = sorted({abs(c) for t in surfaces
                     for _, c in gmsh.model.getBoundary([(2, t)], oriented=False)})
    local = min(sizing.region_sizes.get(r, sizing.size) for r in set(region_of.values()))
    near = sizing.fill_edge_factor * local
    distance = gmsh.model.mesh.field.add("Distance")
    gmsh.model.mesh.field.setNumbers(distance, "CurvesList", curves)
    gmsh.model.mesh.field.setNumber(distance, "Sampling", 50)
    threshold = gmsh.model.mesh.field.add("Threshold")
    gmsh.model.mesh.field.setNumber(threshold, "InField", distance)
    for key, value in (("SizeMin", near), ("SizeMax", sizing.size), ("DistMin", near),
                       ("DistMax", 4 * local)):
        gmsh.model.mesh.field.setNumber(threshold, key, value)
    return [threshold]


def region_size_fields(gmsh, sizing: Sizing, region_of: dict[int, str], entities: str
                       ) -> list[int]:
    """One constant size field per region (its own size or the global one, the smaller)
    over its entities (``entities``: "VolumesList" in 3D, "SurfacesList" in 2D)."""
    fields = []
    for region in dict.fromkeys(region_of.values()):
        f = gmsh.model.mesh.field.add("Constant")
        gmsh.model.mesh.field.setNumbers(f, entities,
                                         [t for t, r in region_of.items() if r == region])
        gmsh.model.mesh.field.setNumber(f, "VIn", min(sizing.size,
                                                      sizing.region_sizes.get(region, math.inf)))
        gmsh.model.mesh.field.setNumber(f, "VOut", 1e22)
        gmsh.model.mesh.field.setNumber(f, "IncludeBoundary", 1)
        fields.append(f)
    return fields


def use_smallest(gmsh, fields: list[int], size: float, algorithm: tuple[str, int]) -> None:
    """The smallest of ``fields`` as the background size, and nothing else sizing the mesh."""
    smallest = gmsh.model.mesh.field.add("Min")
    gmsh.model.mesh.field.setNumbers(smallest, "FieldsList", fields)
    gmsh.model.mesh.field.setAsBackgroundMesh(smallest)
    for option, value in (("MeshSizeFromPoints", 0), ("MeshSizeFromCurvature", 0),
                          ("MeshSizeExtendFromBoundary", 0), ("MeshSizeMax", size),
                          ("MeshSizeMin", 0.0), algorithm):
        gmsh.option.setNumber(f"Mesh.{option}", value)
