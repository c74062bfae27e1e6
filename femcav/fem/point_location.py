"""Which element of a simplex mesh holds a point, and the matrix that evaluates a discrete
field there: how a field solved on one mesh is read on the points of another.

Triangles (a meridional section) and tetrahedra alike: an element is located by the local
coordinates of the point in the simplex of its corners; a curved element's own map is then
inverted by Newton steps. A point no element holds (two meshes approximate a curved wall by
different facets) takes the element it is least outside of, and the field there is that
element's polynomial continued.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.spatial import cKDTree

# A point counts as inside an element when no barycentric coordinate is below this; the
# slack absorbs round-off for points on shared faces.
INSIDE_TOLERANCE = 1e-10
# Nearest centroids tried per point, then the wider search for the points still not inside.
FIRST_CANDIDATES = 8
WIDE_CANDIDATES = 64
# Newton steps on a curved element's map; from the corner simplex's guess it converges in a
# few, the limit only guards against a point far outside.
NEWTON_STEPS = 20


@dataclass(frozen=True)
class Location:
    """Where points lie in a mesh: an element each, and the point's local coordinates in the
    straight-sided simplex of that element's corners."""

    cells: np.ndarray            # element index per point
    local: np.ndarray            # (dim, n) local coordinates in the corner simplex
    min_barycentric: np.ndarray  # smallest barycentric coordinate; < 0: outside that element

    @property
    def outside(self) -> np.ndarray:
        return self.min_barycentric < -INSIDE_TOLERANCE


@dataclass(frozen=True)
class Transfer:
    """DOFs -> field at given points.

    ``matrix`` maps a DOF vector to the field stacked by component, shape
    (components * n_points, n_dofs). ``outside_points`` counts the points no element
    contains and ``worst_barycentric`` says how far out the worst one is, in units of the
    element it was given to.
    """

    matrix: sp.csr_matrix
    n_points: int
    outside_points: int
    worst_barycentric: float


def locate(mesh, points: np.ndarray) -> Location:
    """An element of the scikit-fem simplex ``mesh`` (straight or curved triangles or
    tetrahedra) for each point of ``points`` (dim, n): the containing one, or for a point
    outside the mesh the candidate it is least outside of."""
    dim = mesh.p.shape[0]
    corners = mesh.p[:, mesh.t[:dim + 1]]             # (dim, dim + 1, n_elements)
    tree = cKDTree(corners.mean(axis=1).T)
    inverse, origin = _inverse_maps(corners)
    cells, local, worst = _best_candidates(tree, inverse, origin, points, FIRST_CANDIDATES)
    retry = np.flatnonzero(worst < -INSIDE_TOLERANCE)
    if retry.size:
        # A sliver's centroid can be far from a point it contains; widen the search there.
        wide = _best_candidates(tree, inverse, origin, points[:, retry], WIDE_CANDIDATES)
        better = wide[2] > worst[retry]
        cells[retry[better]] = wide[0][better]
        local[:, retry[better]] = wide[1][:, better]
        worst[retry[better]] = wide[2][better]
    return Location(cells=cells, local=local, min_barycentric=worst)


def _inverse_maps(corners: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    edges = corners[:, 1:, :] - corners[:, :1, :]     # columns p1-p0, p2-p0, ...
    return np.linalg.inv(np.moveaxis(edges, 2, 0)), corners[:, 0, :].T


def _best_candidates(tree, inverse, origin, points, count):
    count = min(count, origin.shape[0])
    _, cand = tree.query(points.T, count)
    cand = cand.reshape(points.shape[1], count)
    local = np.einsum("pkij,pkj->pki", inverse[cand], points.T[:, None, :] - origin[cand])
    bary = np.concatenate([1 - local.sum(axis=2, keepdims=True), local], axis=2)
    lowest = bary.min(axis=2)
    pick = lowest.argmax(axis=1)
    rows = np.arange(points.shape[1])
    return cand[rows, pick], local[rows, pick].T.copy(), lowest[rows, pick]


def evaluation_matrix(basis, points: np.ndarray) -> Transfer:
    """The matrix that evaluates a DOF vector of the scikit-fem ``basis`` at ``points``
    (dim, n): rows component-major (all points of the first component, then the next), one
    component for a scalar element."""
    where = locate(basis.mesh, points)
    cells = where.cells
    reference = reference_coordinates(basis.mapping, points, where)   # (dim, n, 1)
    worst = _barycentric_min(reference[:, :, 0])
    n = points.shape[1]
    rows, cols, vals = [], [], []
    components = 1
    for i in range(basis.Nbfun):
        value = basis_values(basis, reference, i, cells).reshape(-1, n)   # (components, n)
        components = value.shape[0]
        for component in range(components):
            rows.append(component * n + np.arange(n))
            cols.append(basis.element_dofs[i, cells])
            vals.append(value[component])
    matrix = sp.coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                           shape=(components * n, basis.N)).tocsr()
    return Transfer(matrix=matrix, n_points=n,
                    outside_points=int(np.sum(worst < -INSIDE_TOLERANCE)),
                    worst_barycentric=float(min(worst.min(), 0.0)))


def basis_values(basis, reference: np.ndarray, i: int, cells: np.ndarray,
                  part: str = "value") -> np.ndarray:
    """Basis function i of each point's element at that point's reference coordinates
    ``reference`` (dim, n, 1), or its ``part`` ("curl", "grad": a DiscreteField attribute).
    Most scikit-fem elements take one reference point per element.
    The third-order Nédélec triangle takes only points shared by all its elements; it is
    given the points as the quadrature points of one element whose map is, at each point, the
    map of that point's own element (_PointwiseMap), in groups of equal edge orientation."""
    try:
        return _part(basis.elem.gbasis(basis.mapping, reference, i, tind=cells)[0], part)
    except ValueError:
        pass
    mapping = basis.mapping
    orient = basis.elem.orient(mapping, i, cells)
    inverse = mapping.invDF(reference, tind=cells)[:, :, :, 0]     # (dim, dim, n)
    determinant = mapping.detDF(reference, tind=cells)[:, 0]       # (n,)
    out = None
    for sign in np.unique(orient):
        pick = np.flatnonzero(orient == sign)
        view = _PointwiseMap(mapping.mesh, inverse[:, :, None, pick], determinant[None, pick])
        value = _part(basis.elem.gbasis(view, reference[:, pick, 0], i,
                                        tind=cells[pick[:1]])[0], part)[..., 0, :]
        if out is None:
            out = np.empty(value.shape[:-1] + (cells.size,))
        out[..., pick] = value
    return out[..., None]


def _part(field, part: str) -> np.ndarray:
    return np.asarray(field if part == "value" else getattr(field, part))


@dataclass(frozen=True)
class _PointwiseMap:
    """One pseudo-element whose quadrature points each carry their own element's inverse
    Jacobian and determinant (what a covariant Piola map asks of a mapping)."""

    mesh: object
    inverse: np.ndarray          # (dim, dim, 1, n)
    determinant: np.ndarray      # (1, n)

    def invDF(self, X=None, tind=None):   # noqa: N802 - scikit-fem's name
        return self.inverse

    def detDF(self, X=None, tind=None):   # noqa: N802
        return self.determinant


def reference_coordinates(mapping, points: np.ndarray, where: Location) -> np.ndarray:
    """Reference coordinates of each point in its element: the corner simplex's local
    coordinates for a straight element, refined by Newton steps on the element's own map for
    a curved one. Newton is not clipped to the reference element, so a point just outside
    the mesh gets the continuation of its element's map, as it does when straight."""
    from skfem.mapping import MappingAffine

    X = where.local[:, :, None]
    if isinstance(mapping, MappingAffine):
        return X
    x = points[:, :, None]
    for _ in range(NEWTON_STEPS):
        step = np.einsum("ijkl,jkl->ikl", mapping.invDF(X, tind=where.cells),
                         x - mapping.F(X, tind=where.cells))
        X = X + step
        if np.abs(step).max() < 1e-13:
            break
    return X


def _barycentric_min(local: np.ndarray) -> np.ndarray:
    return np.minimum(local.min(axis=0), 1.0 - local.sum(axis=0))
