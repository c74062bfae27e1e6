"""Refuse a mesh the solver cannot use, with a message that says what is wrong and where.

A broken mesh otherwise shows up much later as a singular factorisation, a garbage mode or a
silent hole in the model. Each check is a few vectorised passes over the tetrahedra, so every
mesh (imported or built) is checked on the way in; the messages give coordinates in the unit
of the mesh file, because that is where the user will look for the bad element.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ..errors import InputError
from ..units import UNITS
from .curved_validity import CURVED_RATIO, jacobian_ratios, worst_point
from .mesh import TET_FACES, TaggedMesh
from .params import MAX_LENGTH, MIN_LENGTH

# A tetrahedron is degenerate when 6√2|V| / L³ (L its longest edge; the ratio is 1 for the
# regular tetrahedron) is below this. Flattening a tetrahedron to a height h ≪ L brings the
# ratio down to about h/L and makes its Jacobian about L/h ill-conditioned, so its element
# matrices carry a relative rounding error of about 2.2e-16 / ratio: at 1e-10 that is 2e-6,
# above the 1e-6 limits of the mode checks, so such an element cannot give a mode we would
# pass. The limit sits nine orders below the worst elements of our gmsh builders (measured
# ~0.1), two below the worst we saw from gmsh without optimisation (1e-8), and far above what
# rounding leaves of a truly flat element in double precision (about 1e-16 times coordinate
# size / element size). A flat element stored with only six or seven digits can land above
# it; it is then reported as inverted if rounding tipped it over, or not at all.
DEGENERATE_RATIO = 1e-10

_EDGES = np.array([[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]])
_LISTED_PIECES = 4


def check_mesh(mesh: TaggedMesh, *, unit_m: float = 1.0) -> TaggedMesh:
    """Raise InputError (source: the mesh file) for the first problem found; return the
    mesh with both faces of every named sheet carrying its wall name.

    ``unit_m`` is the length unit of the file in metres, used only to print coordinates.
    """
    check_coordinates(mesh.points, mesh.source, unit_m)
    where = _Locator(mesh, unit_m)
    _check_regions(mesh, where)
    _check_shapes(mesh, where)
    _check_curved(mesh, where)
    return _check_faces(mesh, where)


def check_coordinates(points: np.ndarray, source: str, unit_m: float) -> None:
    """Refuse nodes that are not finite numbers, and a part whose size is out of the range
    femcav takes (params.MIN_LENGTH to MAX_LENGTH): volumes, element matrices and the
    solver's shift would overflow, underflow or lose their digits long before an answer."""
    bad = ~np.all(np.isfinite(points), axis=1)
    if bad.any():
        raise InputError(f"{np.count_nonzero(bad)} of {len(points)} nodes have a coordinate "
                         "that is not a finite number (NaN or infinity)", source=source)
    extent = float(np.max(np.ptp(points, axis=0))) if len(points) else 0.0
    if not MIN_LENGTH <= extent <= MAX_LENGTH:
        raise InputError(f"the mesh spans {extent:.3g} m ({extent / unit_m:.3g} in the file's "
                         f"unit of {unit_m:g} m); femcav takes parts from {MIN_LENGTH:g} m to "
                         f"{MAX_LENGTH:g} m across: check the coordinates and mesh_unit",
                         source=source)


def _check_regions(mesh: TaggedMesh, where: _Locator) -> None:
    # Tag 0 means "no physical group". A mesh with no tags at all is one unnamed region,
    # which is fine; tag 0 next to real tags means some volumes were left out of every group.
    untagged = mesh.tet_region == 0
    if untagged.any() and not untagged.all():
        named = sorted(name for name, rid in mesh.region_names.items() if rid != 0)
        raise where.error(
            f"{where.count(untagged)} {_plural(untagged, 'belongs', 'belong')} to no region "
            f"(tag 0, in no physical volume group) while the others are in {_quoted(named)}; "
            f"the first is at {where.point(untagged)}; put every volume into a physical group")


def _check_shapes(mesh: TaggedMesh, where: _Locator) -> None:
    volume = mesh.tet_volumes()
    p = mesh.points[mesh.tets]
    longest_sq = np.zeros(mesh.n_tets)
    for a, b in _EDGES:  # one edge at a time: half the time of a (n, 6, 3) temporary
        d = p[:, a] - p[:, b]
        np.maximum(longest_sq, np.einsum("ij,ij->i", d, d), out=longest_sq)
    flat = 6.0 * np.sqrt(2.0) * np.abs(volume) < DEGENERATE_RATIO * longest_sq ** 1.5
    if flat.any():
        raise where.error(
            f"{where.count(flat)} {where.regions(flat)} {_plural(flat, 'has', 'have')} (almost) "
            f"zero volume for {_plural(flat, 'its', 'their')} size: flattened or collapsed "
            f"elements; the first is at {where.point(flat)}")
    # Every mesh format fixes one vertex order; the sign itself is a convention, so only a
    # minority of the other sign is wrong: tangled or corrupted elements.
    negative = volume < 0
    minority = negative if 2 * np.count_nonzero(negative) < mesh.n_tets else ~negative
    if minority.any():
        raise where.error(
            f"{where.count(minority)} {where.regions(minority)} {_plural(minority, 'is', 'are')} "
            f"inverted (vertex order opposite to the other "
            f"{mesh.n_tets - np.count_nonzero(minority)}: tangled or corrupted elements); "
            f"the first is at {where.point(minority)}")


def _check_curved(mesh: TaggedMesh, where: _Locator) -> None:
    """Curved elements folded over (or nearly) by their midside nodes."""
    if mesh.tets10 is None:
        return
    ratio = jacobian_ratios(mesh.points, mesh.tets10)
    bad = ratio < CURVED_RATIO
    if bad.any():
        worst = int(np.argmin(ratio))
        at = worst_point(mesh.points, mesh.tets10[worst]) / where.unit_m + 0.0
        raise where.error(
            f"{where.count(bad)} {where.regions(bad)} {_plural(bad, 'is', 'are')} curved so far "
            "that the Jacobian of the element's map falls below "
            f"{CURVED_RATIO:g} of its straight element's (down to {ratio[worst]:.3g}; "
            "negative: folded over, a midside node on the wrong side), the worst at "
            f"(x, y, z) = ({', '.join(f'{c:.4g}' for c in at)}) {where.unit}; check the "
            "midside nodes there, or refine the mesh")


def _check_faces(mesh: TaggedMesh, where: _Locator) -> None:
    """Overlapping elements and pieces that share no face, from one sort of all faces."""
    faces = _sorted_rows(mesh.tets[:, TET_FACES].reshape(-1, 3))
    order, ids = sorted_face_ids(faces, mesh.points.shape[0])
    repeat = np.zeros(len(order), dtype=bool)
    repeat[1:] = ids[1:] == ids[:-1]
    # In a conforming mesh a face belongs to one tetrahedron (boundary) or two (interior).
    third = np.zeros(len(order), dtype=bool)
    third[1:] = repeat[1:] & repeat[:-1]
    if third.any():
        shared = np.unique(faces[order[third]], axis=0)
        owner = np.zeros(mesh.n_tets, dtype=bool)
        owner[order[third][0] // 4] = True
        raise where.error(
            f"{len(shared)} {_plural(len(shared), 'triangle is a face', 'triangles are faces')} "
            "of more than two tetrahedra (overlapping or duplicated elements); the first is in "
            f"the tetrahedron at {where.point(owner)}")
    sheets = _check_inner_faces(mesh, where, order[~(repeat | np.r_[repeat[1:], False])])
    second = np.flatnonzero(repeat)
    a, b = order[second - 1] // 4, order[second] // 4
    # scipy is imported here, not at load time: a case-file error is said before it loads
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    graph = sp.coo_matrix((np.ones(a.size), (a, b)), shape=(mesh.n_tets, mesh.n_tets))
    n_pieces, label = connected_components(graph, directed=False)
    if n_pieces > 1:
        sizes = np.bincount(label)
        by_size = np.argsort(-sizes, kind="stable")
        small = by_size[1:]
        points = "; ".join(where.point(label == piece) for piece in small[:_LISTED_PIECES])
        more = f" and {len(small) - _LISTED_PIECES} more" if len(small) > _LISTED_PIECES else ""
        raise where.error(
            f"the tetrahedra form {n_pieces} separate pieces that share no face, of "
            f"{_sizes(sizes[by_size])} tetrahedra; the smaller "
            f"{_plural(len(small), 'piece is', 'pieces are')} at {points}{more}; "
            "one case file models one connected cavity")
    return sheets


def _check_inner_faces(mesh: TaggedMesh, where: _Locator, once: np.ndarray) -> TaggedMesh:
    """Unnamed boundary faces with mesh volume beyond them would be PEC sheets nobody drew.
    A named sheet is a thin metal (or other) wall: the face across from each named face gets
    its name too, so that both sides of the sheet carry the wall's kind."""
    from .inner_faces import inner_faces    # scipy.spatial, loaded with the first mesh

    found = inner_faces(mesh, once)
    bad = found.faces[~found.named]
    if len(bad):
        corners = mesh.points[bad.reshape(-1)]
        raise where.error(
            f"{len(bad)} boundary {_plural(len(bad), 'triangle has', 'triangles have')} mesh "
            "volume on both sides (a crack: nodes duplicated along an interface, or meshes "
            "that do not match across it) and no wall name, within "
            f"{where.box(corners)}; unnamed, such faces would be a metal sheet: merge the "
            "nodes, or to keep the sheet on purpose name its faces as a wall (a physical "
            "surface group)")
    twins = found.twin_tag >= 0
    if not twins.any():
        return mesh
    return replace(mesh, faces=np.vstack([mesh.faces, found.faces[twins]]),
                   face_tag=np.concatenate([mesh.face_tag, found.twin_tag[twins]]))


def _sorted_rows(triples: np.ndarray) -> np.ndarray:
    """Each row in increasing order; for three columns min/max arithmetic beats np.sort."""
    low, high = triples.min(axis=1), triples.max(axis=1)
    return np.column_stack([low, triples.sum(axis=1) - low - high, high])


def sorted_face_ids(faces: np.ndarray, n_points: int) -> tuple[np.ndarray, np.ndarray]:
    """An order that puts equal rows of ``faces`` (sorted vertex triples) next to each other,
    and for each position in that order a number equal exactly where the rows are equal."""
    n = np.int64(n_points)
    if n_points < 2 ** 21:  # n³ fits in int64: one integer per face sorts twice as fast
        f = faces.astype(np.int64)
        key = (f[:, 0] * n + f[:, 1]) * n + f[:, 2]
        order = np.argsort(key, kind="stable")
        return order, key[order]
    order = np.lexsort(faces.T[::-1])
    ordered = faces[order]
    new = np.ones(len(order), dtype=np.int64)
    new[1:] = np.any(ordered[1:] != ordered[:-1], axis=1)
    return order, np.cumsum(new)


class _Locator:
    """Turns sets of tetrahedra into the words of a message: counts, regions, coordinates."""

    def __init__(self, mesh: TaggedMesh, unit_m: float):
        self.mesh = mesh
        self.unit_m = unit_m
        self.unit = _unit_name(unit_m)
        self.region_of = {rid: name for name, rid in mesh.region_names.items()}

    def error(self, message: str) -> InputError:
        return InputError(message, source=self.mesh.source)

    def count(self, bad: np.ndarray) -> str:
        return f"{np.count_nonzero(bad)} of {self.mesh.n_tets} tetrahedra"

    def regions(self, bad: np.ndarray) -> str:
        ids = np.unique(self.mesh.tet_region[bad])
        names = [self.region_of.get(int(i), str(i)) for i in ids]
        return f"(in {_plural(len(names), 'region', 'regions')} {_quoted(names)})"

    def box(self, points: np.ndarray) -> str:
        """The bounding box of ``points`` (metres) in the file's unit."""
        lo, hi = (points.min(axis=0) / self.unit_m + 0.0, points.max(axis=0) / self.unit_m + 0.0)
        return (f"(x, y, z) = ({', '.join(f'{c:.4g}' for c in lo)}) to "
                f"({', '.join(f'{c:.4g}' for c in hi)}) {self.unit}")

    def point(self, bad: np.ndarray) -> str:
        """The centroid of the first tetrahedron in ``bad``: a point inside it."""
        first = int(np.argmax(bad))
        centre = self.mesh.points[self.mesh.tets[first]].mean(axis=0) / self.unit_m + 0.0
        return f"(x, y, z) = ({', '.join(f'{c:.4g}' for c in centre)}) {self.unit}"


def _unit_name(unit_m: float) -> str:
    for name, factor in UNITS["length"].items():
        if np.isclose(factor, unit_m, rtol=1e-12, atol=0.0):
            return name
    return f"x {unit_m:g} m"


def _plural(n: int | np.ndarray, one: str, many: str) -> str:
    """``one`` or ``many`` for a count, or for the number of True entries of a mask."""
    count = np.count_nonzero(n) if isinstance(n, np.ndarray) else n
    return one if count == 1 else many


def _quoted(names) -> str:
    return ", ".join(repr(n) for n in names)


def _sizes(sizes: np.ndarray) -> str:
    shown = [str(s) for s in sizes[:_LISTED_PIECES + 1]]
    if len(sizes) > len(shown):
        shown.append(f"{len(sizes) - len(shown)} more")
    return ", ".join(shown[:-1]) + " and " + shown[-1]
