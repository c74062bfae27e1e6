"""How many elements a builder's mesh will have, estimated before gmsh is called, and the
refusal of a mesh that cannot fit.

gmsh gives no way to stop a mesh that has grown too large: a 1 m box at 0.5 mm ran for
minutes into many gigabytes. The element count follows from the measure of each region
(volume, or area of a meridional section) and its element size, so a mesh that cannot be
held, or solved, on this machine is refused in milliseconds, with the estimate and the
limit.

Densities measured on our gmsh builder meshes (Delaunay, Algorithm3D = 1, one thread):
tetrahedra per h³ of volume 4.72 and 4.56 (box 22.86 x 10.16 x 30 mm, h = 1 and 0.5 mm),
4.57 (pillbox, 0.8 mm), 4.63 (DR fixture, 1 mm), 5.18 (box with a tuning post and its edge
refinement, 1 mm); a regular tetrahedron of edge h would give 6√2 = 8.49 (gmsh's elements
come out a little larger than h). Triangles per h² of a section: 2.37 (pillbox, 0.8 mm;
equilateral triangles of side h would give 4/√3 = 2.31); the grading at a singular corner of
a section (section.py) adds about 400 triangles per corner whatever h is (DR fixture at
1 mm: 2858 triangles against 950 without corners, for about five corners).
"""

from __future__ import annotations

import math

import numpy as np

from ..memory_room import available_bytes, format_bytes
from ..errors import InputError
from ..units import format_length

TETRAHEDRA_PER_CUBIC_SIZE = 4.8
TRIANGLES_PER_SQUARE_SIZE = 2.4
TRIANGLES_PER_SOLID = 800          # singular-corner grading: about two corners per solid
# Peak memory while meshing and reading the mesh back, per element: 0.83 kB per tetrahedron
# (box, 492k tetrahedra, whole-process peak); a section's triangles cost less than its solve.
MESH_BYTES_PER_TETRAHEDRON = 1000.0
MESH_BYTES_PER_TRIANGLE = 1000.0
# Hard caps, whatever the memory: at 1e8 tetrahedra the order-1 matrices (1.2 DOFs and 15
# non-zeros per row each) come near 2³¹ non-zeros, where scipy's sparse matrices leave 32-bit
# indices; a section of 2e7 triangles is already 3e8 DOFs at order 3.
MAX_TETRAHEDRA = 100_000_000
MAX_TRIANGLES = 20_000_000
# DOFs per tetrahedron by element order (box, 10k tetrahedra: 1.36, 6.98, 19.9; large meshes
# have fewer boundary DOFs: about 1.2, 6.3 and 18.5 from Euler's relation, E ≈ 1.17 T,
# F ≈ 2 T) and the whole-process peak per DOF of the leanest solve measured at each order
# (order 1, LOBPCG + HX at 1M DOFs: 6.1 GB; order 3, PARDISO at 293k DOFs: 3.4 GB; order 2
# between the two). A guard against what cannot run at all: eigen.selection refuses a
# solve near the limit after assembly, from the real matrices.
DOFS_PER_TETRAHEDRON = {1: 1.2, 2: 6.3, 3: 18.5}
SOLVE_BYTES_PER_DOF = {1: 6000.0, 2: 9000.0, 3: 11600.0}
# Section, per azimuthal order: Nédélec plus Lagrange DOFs per triangle (2, 7, 15 for orders
# 1, 2, 3; 15.0 measured at order 3) and the measured peak of a shift-invert solve per DOF
# (pillbox, order 3: 4.2 kB at 526k DOFs, 4.9 kB at 130k).
DOFS_PER_TRIANGLE = {1: 2.0, 2: 7.0, 3: 15.0}
SECTION_SOLVE_BYTES_PER_DOF = 4500.0
MEMORY_SHARE = 0.85                # as eigen.selection: leave the rest to everything else
SAMPLES = 20_000                   # Monte Carlo points per region: about 1 % on the measure


def region_measures(layout, cuts: dict[str, float], *, section: bool) -> dict[str, float]:
    """Volume (m³) of every region of ``layout`` cut at ``cuts``, or with ``section`` the area
    (m²) of its meridional section, by sampling each region's bounding box (fixed seed)."""
    from .parts import AXES

    lo, hi = layout.bounds()
    if section:                     # the half-plane y = 0, x = r >= 0
        lo, hi = np.array([0.0, 0.0, lo[2]]), np.array([hi[0], 0.0, hi[2]])
    for axis, position in cuts.items():
        lo[AXES.index(axis)] = max(lo[AXES.index(axis)], position)
    solids = {layout.background: layout.space}
    for name, solid in layout.fills:
        solids.setdefault(name, []).append(solid)
    rng = np.random.default_rng(0)
    out = {}
    for name, pieces in solids.items():
        box_lo, box_hi = lo.copy(), hi.copy()
        if name != layout.background:
            box_lo = np.maximum(lo, np.min([s.bounds()[0] for s in pieces], axis=0))
            box_hi = np.minimum(hi, np.max([s.bounds()[1] for s in pieces], axis=0))
        extent = np.maximum(box_hi - box_lo, 0.0)
        if section:
            extent[1] = 1.0         # an area: the y extent does not count
        points = box_lo + rng.random((SAMPLES, 3)) * (box_hi - box_lo)
        share = np.count_nonzero(_region_at(layout, points) == name) / SAMPLES
        out[name] = out.get(name, 0.0) + float(np.prod(extent)) * share
    return out


def _region_at(layout, points: np.ndarray) -> np.ndarray:
    """The region name at each point ("" outside the part), by the Layout's own rules."""
    inside = np.zeros(len(points), dtype=bool)
    for solid in layout.space:
        inside |= solid.contains(points)
    for _, solid in layout.metal:
        inside &= ~solid.contains(points)
    names = np.where(inside, layout.background, "").astype(object)
    for name, solid in layout.fills:    # a later fill wins
        names[inside & solid.contains(points)] = name
    return names


def estimated_elements(layout, sizing, cuts: dict[str, float] | None = None, *,
                       section: bool = False) -> float:
    """Tetrahedra (or with ``section`` triangles) gmsh will make for ``layout`` at
    ``sizing``, from each region's measure and its element size."""
    dim = 2 if section else 3
    density = TRIANGLES_PER_SQUARE_SIZE if section else TETRAHEDRA_PER_CUBIC_SIZE
    total = 0.0
    with np.errstate(over="ignore", divide="ignore"):
        for region, measure in region_measures(layout, cuts or {}, section=section).items():
            size = min(sizing.size, sizing.region_sizes.get(region, math.inf))
            total += density * measure / np.float64(size) ** dim
    if section:
        total += TRIANGLES_PER_SOLID * (len(layout.fills) + len(layout.metal))
    return float(total)


def element_limit(*, section: bool, solve_order: int | None) -> tuple[float, str]:
    """The most elements this machine can mesh (and, given ``solve_order``, solve with the
    leanest eigen method), and the reason: the free memory or the hard cap."""
    if section:
        per_element = MESH_BYTES_PER_TRIANGLE
        if solve_order is not None:
            per_element = max(per_element, DOFS_PER_TRIANGLE[solve_order]
                              * SECTION_SOLVE_BYTES_PER_DOF)
        cap = MAX_TRIANGLES
    else:
        per_element = MESH_BYTES_PER_TETRAHEDRON
        if solve_order is not None:
            per_element = max(per_element, DOFS_PER_TETRAHEDRON[solve_order]
                              * SOLVE_BYTES_PER_DOF[solve_order])
        cap = MAX_TETRAHEDRA
    free = available_bytes()
    by_memory = MEMORY_SHARE * free / per_element
    if by_memory >= cap:
        return float(cap), "the hard limit"
    what = "meshing" if solve_order is None else f"an order-{solve_order} solve"
    return by_memory, f"what fits in the {format_bytes(free)} of free memory for {what}"


def check_mesh_budget(layout, sizing, cuts: dict[str, float] | None = None, *,
                      section: bool = False) -> float:
    """The estimated element count; InputError (field ``mesh``) when it is above the limit."""
    estimate = estimated_elements(layout, sizing, cuts, section=section)
    limit, why = element_limit(section=section, solve_order=sizing.solve_order)
    if not estimate <= limit:
        kind = "triangles in the meridional section" if section else "tetrahedra"
        smallest = min([sizing.size, *sizing.region_sizes.values()])
        shown = f"{estimate:.2g}" if math.isfinite(estimate) else "more than 1e308"
        raise InputError(
            f"this mesh would have about {shown} {kind} (estimated from the part's "
            f"{'section area' if section else 'volume'} and the element sizes, smallest "
            f"{format_length(smallest, 3)}) but {limit:.2g} is {why}; use a larger [mesh] size, a lower "
            f"max_frequency or per_wavelength"
            + ("" if section else ", or symmetry planes"), field="mesh")
    return estimate
