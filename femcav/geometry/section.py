"""The meridional section of a body-of-revolution Layout, meshed in the (r, z) half-plane.

A builder's Layout made of cylinders on the z axis (pillbox, coaxial and re-entrant
cavities, a dielectric resonator on the axis of its shield) is also a body of revolution:
each cylinder is a rectangle 0 <= r <= radius in the section, and a sphere centred on the
axis (an open part's sphere and its shell) a half disc. The same boolean steps as in
3D (space, minus metal, fragmented by fills) run on those rectangles, and the boundary
curves are named by the Layout's own rules, applied to the section's points placed in the
plane y = 0 (x = r). Curves on r = 0 are named ``axis``.
"""

from __future__ import annotations

import math

import numpy as np

from .periodic_faces import copy_face_meshes
from ..errors import InputError
from .gmsh_session import gmsh_model
from .meridional import AXIS, MeridionalMesh, checked_section
from .mesh_budget import check_mesh_budget
from .parts import Layout, Sizing, fragment_by_fills, region_size_fields, use_smallest
from .solids import Cylinder, Sphere


def _rectangle(solid, tol: float) -> tuple[float, float, float]:
    """(radius, z_low, z_high) of a cylinder on the z axis; InputError for anything else."""
    if isinstance(solid, Cylinder):
        base, axis = np.asarray(solid.base, float), np.asarray(solid.axis, float)
        if abs(base[0]) <= tol and abs(base[1]) <= tol and abs(axis[0]) <= tol \
                and abs(axis[1]) <= tol:
            z0, z1 = sorted((base[2], base[2] + axis[2]))
            return float(solid.radius), float(z0), float(z1)
    raise InputError(f"{solid} is not a body of revolution about the z axis, so this part "
                     "has no axisymmetric model; solve it in 3D (drop azimuthal_orders)",
                     option="azimuthal_orders")


def _on_axis_sphere(solid, tol: float) -> bool:
    return isinstance(solid, Sphere) and abs(solid.centre[0]) <= tol \
        and abs(solid.centre[1]) <= tol


def _half_disc(gmsh, sphere: Sphere) -> int:
    """The sphere's section: one arc of half a turn from the axis to the axis, closed along
    it (a disc cut at the axis would keep its seam point off the axis, and the mesh is
    graded at such points as at a corner)."""
    occ = gmsh.model.occ
    zc, a = float(sphere.centre[2]), float(sphere.radius)
    arc = occ.addCircle(0.0, zc, 0.0, a, angle1=-math.pi / 2, angle2=math.pi / 2)
    occ.synchronize()
    (_, low), (_, high) = gmsh.model.getBoundary([(1, arc)])
    return occ.addPlaneSurface([occ.addCurveLoop([arc, occ.addLine(high, low)])])


def axisymmetric_layout_check(layout: Layout) -> None:
    """InputError unless every solid of ``layout`` is a cylinder on the z axis or a profile
    revolved about it."""
    tol = 1e-9 * layout.extent()
    for solid in [*layout.space, *(s for _, s in layout.metal), *(s for _, s in layout.fills)]:
        if not hasattr(solid, "add_section") and not _on_axis_sphere(solid, tol):
            _rectangle(solid, tol)


def mesh_section(layout: Layout, sizing: Sizing, name: str = "section") -> MeridionalMesh:
    """Mesh the meridional section of ``layout`` with triangles of ``sizing``'s sizes."""
    axisymmetric_layout_check(layout)
    check_mesh_budget(layout, sizing, section=True)
    tol = 1e-7 * layout.extent()

    def add(occ, solid) -> int:
        if hasattr(solid, "add_section"):       # a revolved profile (profile.py)
            return solid.add_section(occ)
        if _on_axis_sphere(solid, tol):
            return _half_disc(gmsh, solid)
        radius, z0, z1 = _rectangle(solid, tol)
        return occ.addRectangle(0.0, z0, 0.0, radius, z1 - z0)

    with gmsh_model(name) as gmsh:
        occ = gmsh.model.occ
        space = [(2, add(occ, s)) for s in layout.space]
        if len(space) > 1:
            space, _ = occ.fuse(space[:1], space[1:])
        if layout.metal:
            space, _ = occ.cut(space, [(2, add(occ, m)) for _, m in layout.metal])
        region_of = fragment_by_fills(occ, layout, space,
                                      [(2, add(occ, f)) for _, f in layout.fills])
        occ.synchronize()

        walls = _name_curves(gmsh, layout, tol)
        copy_face_meshes(gmsh, walls, sizing.periodic_faces, tol, dim=1)   # periodic cell
        _set_sizes(gmsh, sizing, region_of)
        gmsh.model.mesh.generate(2)
        if sizing.curved:       # 6-node triangles with their midpoints on curved walls
            gmsh.model.mesh.setOrder(2)
        return _read(gmsh, region_of, walls, layout.description or name)


def _name_curves(gmsh, layout: Layout, tol: float) -> dict[int, str]:
    walls = {}
    for _, tag in gmsh.model.getEntities(1):
        up, _ = gmsh.model.getAdjacencies(1, tag)
        if len(up) != 1:
            continue
        lo, hi = gmsh.model.getParametrizationBounds(1, tag)
        ts = [lo[0] + (hi[0] - lo[0]) * (i + 0.5) / 7 for i in range(7)]
        rz = np.reshape(gmsh.model.getValue(1, tag, ts), (-1, 3))[:, :2]
        if np.all(np.abs(rz[:, 0]) <= tol):
            walls[tag] = AXIS
            continue
        xyz = np.column_stack([rz[:, 0], np.zeros(len(rz)), rz[:, 1]])
        name = ""
        for metal_name, solid in layout.metal:
            if np.all(solid.on_surface(xyz, tol)):
                name = metal_name
                break
        walls[tag] = name or layout.outer_wall(xyz)
    return walls


# Corners where regions of different material meet, and re-entrant corners of the boundary,
# carry field singularities that hold the convergence to a low rate. Elements there shrink
# to CORNER_FACTOR of the local size, growing linearly with the distance (a geometric
# grading, about 1.5 from one element to the next) back to it within CORNER_REACH sizes.
# Measured (DR fixture, ε_r = 24 puck with a hole, TM01δ, order 3, h = 0.6 mm): without
# grading 2.0e-4 from the converged value, 3.4e-5 at h = 0.15 mm; with it 4e-8 at h = 0.6 mm.
CORNER_FACTOR = 1e-3
CORNER_REACH = 2.0
# gmsh element types: nodes per triangle and per boundary edge, straight and curved
TRIANGLE_NODES = {2: 3, 9: 6}
LINE_NODES = {1: 2, 8: 3}


def _singular_corners(gmsh, region_of: dict[int, str], size: float) -> list[int]:
    """Geometry points off the axis where two regions meet or the boundary turns inward."""
    tol = 1e-9 * size
    out = []
    for _, point in gmsh.model.getEntities(0):
        x, z, _ = gmsh.model.getValue(0, point, [])
        if abs(x) <= tol:          # an interface crossing the axis is smooth there
            continue
        curves, _ = gmsh.model.getAdjacencies(0, point)
        surfaces = {s for c in curves for s in gmsh.model.getAdjacencies(1, c)[0]}
        if len({region_of.get(s) for s in surfaces}) > 1:
            out.append(point)
            continue
        probe = 1e-3 * size
        inside = sum(any(gmsh.model.isInside(2, s, [x + probe * math.cos(a),
                                                    z + probe * math.sin(a), 0.0])
                         for s in surfaces)
                     for a in np.linspace(0, 2 * math.pi, 16, endpoint=False))
        if inside > 8 and not _smooth(gmsh, point, curves):   # more than half a turn: re-entrant
            out.append(point)
    return out


def _smooth(gmsh, point: int, curves) -> bool:
    """Two curves meeting at ``point`` along one tangent line (an elliptic arc running into
    a straight wall): the boundary does not turn there. (Probes a hair's breadth from such
    a point are classified unreliably next to elliptic arcs.)"""
    if len(curves) != 2:
        return False
    xyz = gmsh.model.getValue(0, point, [])
    directions = []
    for curve in curves:
        t = gmsh.model.getParametrization(1, curve, list(xyz))
        d = np.asarray(gmsh.model.getDerivative(1, curve, t)[:2])
        directions.append(d / np.linalg.norm(d))
    return abs(directions[0][0] * directions[1][1] - directions[0][1] * directions[1][0]) < 1e-6


def _set_sizes(gmsh, sizing: Sizing, region_of: dict[int, str]) -> None:
    fields = region_size_fields(gmsh, sizing, region_of, "SurfacesList")
    corners = _singular_corners(gmsh, region_of, sizing.size)
    if corners and CORNER_FACTOR < 1:
        distance = gmsh.model.mesh.field.add("Distance")
        gmsh.model.mesh.field.setNumbers(distance, "PointsList", corners)
        threshold = gmsh.model.mesh.field.add("Threshold")
        gmsh.model.mesh.field.setNumber(threshold, "InField", distance)
        gmsh.model.mesh.field.setNumber(threshold, "SizeMin", CORNER_FACTOR * sizing.size)
        gmsh.model.mesh.field.setNumber(threshold, "SizeMax", sizing.size)
        gmsh.model.mesh.field.setNumber(threshold, "DistMin", 0.0)
        gmsh.model.mesh.field.setNumber(threshold, "DistMax", CORNER_REACH * sizing.size)
        fields.append(threshold)
    use_smallest(gmsh, fields, sizing.size, ("Algorithm", 6))


def _read(gmsh, region_of: dict[int, str], walls: dict[int, str], source: str
          ) -> MeridionalMesh:
    tags, coords, _ = gmsh.model.mesh.getNodes()
    index = np.full(int(tags.max()) + 1, -1, dtype=np.int64)
    index[tags.astype(np.int64)] = np.arange(tags.size)
    points = np.reshape(coords, (-1, 3))[:, :2]
    region_names = {r: i for i, r in enumerate(dict.fromkeys(region_of.values()))}
    triangles, tri_region = [], []
    for surface, region in region_of.items():
        types, _, nodes = gmsh.model.mesh.getElements(2, surface)
        for kind, node_list in zip(types, nodes):
            if kind not in TRIANGLE_NODES:
                continue
            tri = index[np.reshape(node_list, (-1, TRIANGLE_NODES[kind])).astype(np.int64)]
            triangles.append(tri)
            tri_region.append(np.full(len(tri), region_names[region]))
    wall_names = {w: i for i, w in enumerate(sorted(set(walls.values()) - {""}))}
    edges, edge_tag = [], []
    for curve, wall in walls.items():
        if not wall:
            continue
        types, _, nodes = gmsh.model.mesh.getElements(1, curve)
        for kind, node_list in zip(types, nodes):
            if kind in LINE_NODES:      # the end points of straight or curved edges
                e = index[np.reshape(node_list, (-1, LINE_NODES[kind]))[:, :2].astype(np.int64)]
                edges.append(e)
                edge_tag.append(np.full(len(e), wall_names[wall]))
    cells = np.concatenate(triangles)
    corners = np.unique(cells[:, :3])     # first: the section keeps its corners first
    used = np.concatenate([corners, np.setdiff1d(np.unique(cells), corners)])
    renumber = np.full(points.shape[0], -1, dtype=np.int64)
    renumber[used] = np.arange(used.size)
    mesh = MeridionalMesh(
        points=points[used], triangles=renumber[cells[:, :3]],
        tri_region=np.concatenate(tri_region), region_names=region_names,
        edges=renumber[np.concatenate(edges)] if edges else np.zeros((0, 2), np.int64),
        edge_tag=np.concatenate(edge_tag) if edge_tag else np.zeros(0, np.int64),
        wall_names=wall_names, source=source,
        triangles6=renumber[cells] if cells.shape[1] == 6 else None)
    return checked_section(mesh)
