"""Overlap of modes solved on two meshes of the same part.

A mode of the coarse mesh is evaluated at the quadrature points of the fine mesh (point
location in the coarse mesh, then the coarse basis at the located reference coordinates), so
both fields are integrated with one rule, the fine one. The weight is the mass coefficient of
the form (eps_r in the E form, mu_r in the H form): the overlap is then the M-inner product
of the fine discretisation, in which the fine modes are orthonormal, and
O_ij = |(c_i, f_j)_M| / (‖c_i‖_M ‖f_j‖_M) lies in [0, 1] by the Cauchy–Schwarz inequality.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.spatial import cKDTree

from ..fem.space import EdgeSpace

# A point counts as inside an element when no barycentric coordinate is below this; the
# slack absorbs round-off for points on shared faces.
INSIDE_TOLERANCE = 1e-10
# Nearest centroids tried per point, then the wider search for the points still not inside.
FIRST_CANDIDATES = 8
WIDE_CANDIDATES = 64
# Newton steps on a curved element's map; from the corner tetrahedron's guess it converges
# in a few, the limit only guards against a point far outside.
NEWTON_STEPS = 20


@dataclass(frozen=True)
class Location:
    """Where points lie in a mesh: an element each, and the point's local coordinates in the
    straight-sided tetrahedron of that element's corners."""

    cells: np.ndarray            # element index per point
    local: np.ndarray            # (3, n) local coordinates in the corner tetrahedron
    min_barycentric: np.ndarray  # smallest barycentric coordinate; < 0: outside that element

    @property
    def outside(self) -> np.ndarray:
        return self.min_barycentric < -INSIDE_TOLERANCE


@dataclass(frozen=True)
class Transfer:
    """Coarse DOFs -> coarse field at the fine quadrature points.

    ``matrix`` maps a DOF vector of the coarse space to the field stacked by component,
    shape (3 * n_points, n_coarse_edges). Points the coarse mesh does not contain (the two
    meshes approximate a curved wall by different facets) take the field of the element
    they are nearest to, continued as its polynomial; ``outside_points`` counts them and
    ``worst_barycentric`` says how far out the worst one is, in units of that element.
    """

    matrix: sp.csr_matrix
    n_points: int
    outside_points: int
    worst_barycentric: float


@dataclass(frozen=True)
class Overlaps:
    """``matrix[i, j]`` = overlap of coarse mode i with fine mode j, in [0, 1]. ``inner`` holds
    the signed inner products of the normalised fields and ``coarse_gram`` those of the
    normalised coarse fields with each other (not quite the identity: they were orthonormal
    on their own mesh), for projections onto the span of a cluster of modes."""

    matrix: np.ndarray
    inner: np.ndarray
    coarse_gram: np.ndarray
    transfer: Transfer


def locate(mesh, points: np.ndarray) -> Location:
    """An element of ``mesh`` (a scikit-fem MeshTet or MeshTet2) for each point of ``points``
    (3, n): the containing one, or for a point outside the mesh the candidate it is least
    outside of. Curved elements are searched by their corner tetrahedra."""
    corners = mesh.p[:, mesh.t[:4]]                   # (3, 4, n_elements)
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
    edges = corners[:, 1:, :] - corners[:, :1, :]     # columns p1-p0, p2-p0, p3-p0
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


def transfer_matrix(coarse: EdgeSpace, points: np.ndarray) -> Transfer:
    """The matrix that evaluates a coarse-space DOF vector at ``points`` (3, n)."""
    basis = coarse.basis
    where = locate(coarse.mesh, points)
    cells = where.cells
    reference = _reference_coordinates(basis.mapping, points, where)   # (3, n, 1)
    worst = _barycentric_min(reference[:, :, 0])
    n = points.shape[1]
    rows, cols, vals = [], [], []
    for i, value in enumerate(_basis_values(basis, reference, cells)):
        for component in range(3):
            rows.append(component * n + np.arange(n))
            cols.append(basis.element_dofs[i, cells])
            vals.append(value[component, :, 0])
    matrix = sp.coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                           shape=(3 * n, basis.N)).tocsr()
    return Transfer(matrix=matrix, n_points=n,
                    outside_points=int(np.sum(worst < -INSIDE_TOLERANCE)),
                    worst_barycentric=float(min(worst.min(), 0.0)))


def _basis_values(basis, reference: np.ndarray, cells: np.ndarray):
    """The value (3, n, 1) of each basis function at the points, as scikit-fem's gbasis
    gives it (the covariant Piola map, the same einsum), with the inverse Jacobian computed
    once for all functions rather than once per function, and no curl: on curved meshes
    that repeated map made most of the transfer's time."""
    from skfem.element import ElementHcurl

    elem, mapping = basis.elem, basis.mapping
    if not (isinstance(elem, ElementHcurl) and mapping.mesh.dim() == 3):
        for i in range(basis.Nbfun):
            yield np.asarray(elem.gbasis(mapping, reference, i, tind=cells)[0])
        return
    inverse = mapping.invDF(reference, tind=cells)
    for i in range(basis.Nbfun):
        phi, _ = elem.lbasis(reference, i)
        yield np.einsum("ijkl,ikl,k->jkl", inverse, phi, elem.orient(mapping, i, cells))


def _reference_coordinates(mapping, points: np.ndarray, where: Location) -> np.ndarray:
    """Reference coordinates of each point in its element: the corner tetrahedron's local
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


def mode_overlaps(coarse: EdgeSpace, coarse_dofs: np.ndarray, fine: EdgeSpace,
                  fine_dofs: np.ndarray) -> Overlaps:
    """Overlaps of the coarse modes (columns of ``coarse_dofs``) with the fine ones."""
    if coarse.form != fine.form:
        raise ValueError(f"cannot compare an {coarse.form} form result with an {fine.form} "
                         "form one: the stored fields differ")
    basis = fine.basis
    points = basis.mapping.F(basis.X).reshape(3, -1)     # element-major, as basis.dx
    transfer = transfer_matrix(coarse, points)
    weight = (fine.mass_coef * basis.dx).ravel()
    c = (transfer.matrix @ coarse_dofs).reshape(3, -1, coarse_dofs.shape[1])
    f = np.stack([np.asarray(basis.interpolate(fine_dofs[:, j])).reshape(3, -1)
                  for j in range(fine_dofs.shape[1])], axis=2)
    cross = np.einsum("cpi,p,cpj->ij", c, weight, f)
    gram = np.einsum("cpi,p,cpk->ik", c, weight, c)
    c_norm = np.sqrt(np.maximum(np.diag(gram), np.finfo(float).tiny))
    f_norm = np.sqrt(np.maximum(np.einsum("cpj,p,cpj->j", f, weight, f), np.finfo(float).tiny))
    inner = cross / np.outer(c_norm, f_norm)
    return Overlaps(matrix=np.minimum(np.abs(inner), 1.0), inner=inner,
                    coarse_gram=gram / np.outer(c_norm, c_norm), transfer=transfer)
