"""The discrete space: Nédélec edge elements of order 1, 2 or 3 on the model's mesh, with the
essential walls of the chosen field form removed and the coefficients of the form evaluated
at the quadrature points."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from ..errors import InputError
from ..materials import check_permittivity
from ..model import FORMS, Model
from ..walls import essential_kinds
from .absorber import with_absorbing_layers
from .coefficients import (GENERAL, HERMITIAN, SYMMETRIC, as_tensor, inverse, isotropic_part,
                           pencil_kind)
from .constraints import Constraint
from .lagrange import ElementTetLagrange
from .nedelec import ElementTetNedelec
from .periodic import periodic_constraints
from .point_location import evaluation_matrix


@dataclass(frozen=True)
class EdgeSpace:
    """Everything assembly and post-processing need to know about the discretisation.

    ``stiffness_coef`` and ``mass_coef`` hold the coefficients of the form at the quadrature
    points (fem.coefficients: (n_elements, n_points), or (..., 3, 3) tensors, real or
    complex): 1/mu_r and eps_r in the E form, 1/eps_r and mu_r in the H form. ``constraint`` keeps the edge DOFs that remain after the essential walls,
    ``scalar_constraint`` the DOFs of the matching scalar (gradient) space.
    """

    model: Model
    form: str
    order: int
    mesh: object                 # skfem.MeshTet, vertices of every tetrahedron sorted
    element: object              # the Nédélec element of this order
    scalar_element: object       # the Lagrange element of this order
    quadrature: tuple            # reference points (3, n_points) and weights (n_points,)
    dofs: object                 # skfem Dofs of the edge space
    scalar_dofs: object          # skfem Dofs of the scalar (gradient) space
    constraint: Constraint
    scalar_constraint: Constraint
    stiffness_coef: np.ndarray
    mass_coef: np.ndarray
    facet_wall: dict[int, str]   # boundary facet index -> wall name ("" for unnamed)

    @property
    def n_dofs(self) -> int:
        return self.constraint.size

    @cached_property
    def pencil_kind(self) -> str:
        """fem.coefficients.HERMITIAN (real symmetric included), SYMMETRIC (complex
        symmetric: lossy or absorbing) or GENERAL. A complex-symmetric form reduced by a
        phase-linked constraint (Pᴴ K P, a periodic cell at a phase other than 0 or π) is
        neither."""
        kind = pencil_kind(self.stiffness_coef, self.mass_coef)
        if kind == SYMMETRIC and self.constraint.dtype.kind == "c":
            return GENERAL
        return kind

    @property
    def hermitian(self) -> bool:
        return self.pencil_kind == HERMITIAN

    @cached_property
    def basis(self):
        """A scikit-fem basis on the space's quadrature, built on first use: assembly works
        from reference tables and does not need it; post-processing does."""
        from skfem import CellBasis
        return CellBasis(self.mesh, self.element, quadrature=self.quadrature, dofs=self.dofs)

    @cached_property
    def quadrature_map(self):
        """The element map at the quadrature points (fem.quadrature_fields), built on first
        use and kept for every mode's post-processing."""
        from .quadrature_fields import quadrature_map
        return quadrature_map(self)

    @cached_property
    def scalar_basis(self):
        from skfem import CellBasis
        return CellBasis(self.mesh, self.scalar_element, quadrature=self.quadrature,
                         dofs=self.scalar_dofs)

    # The field-sampling protocol (shared with the axisymmetric order spaces): how modes of
    # two meshes are compared (post.field_overlap). A mode's stored vector is over all edges.

    def samples(self) -> tuple[np.ndarray, np.ndarray]:
        """The quadrature points (3, P) and their weights: the mass coefficient times the
        volume, so that the weighted sum of u·v is the M-inner product (for a tensor or a
        lossy coefficient, its real isotropic part: a weight for matching modes)."""
        basis = self.basis
        return (basis.mapping.F(basis.X).reshape(3, -1),       # element-major, as basis.dx
                (isotropic_part(self.mass_coef) * basis.dx).ravel())

    def sampled_fields(self, vectors: np.ndarray) -> np.ndarray:
        """The fields of the columns of ``vectors`` at ``samples()``' points: (3, P, n)."""
        return np.stack([np.asarray(self.basis.interpolate(vectors[:, j])).reshape(3, -1)
                         for j in range(vectors.shape[1])], axis=2)

    def full_vectors(self, stored: np.ndarray) -> np.ndarray:
        """Stored mode vectors over every DOF of the mesh (already so in 3D)."""
        return stored

    def stored_vectors(self, full: np.ndarray) -> np.ndarray:
        return full

    def field_reader(self, points: np.ndarray):
        """A point_location.Transfer: stored vector -> field at ``points`` (3, n)."""
        return evaluation_matrix(self.basis, points)


ORDERS = (1, 2, 3)


def build_space(model: Model, form: str = "E", order: int = 1, *,
                losses_inside: bool = False) -> EdgeSpace:
    """The space of ``model`` in the E or H ``form``; with ``losses_inside`` the loss
    tangents enter the coefficients (eps_r (1 - j tan δ)), so the pencil is complex
    symmetric and its eigenvalues carry the dielectric Q."""
    from skfem.assembly import Dofs
    from skfem.quadrature import get_quadrature

    if form not in FORMS:
        raise InputError(f"unknown field form {form!r}; allowed: {', '.join(FORMS)}",
                         option="form")
    if order not in ORDERS:
        raise InputError(f"element order must be one of {', '.join(map(str, ORDERS))}, got "
                         f"{order!r}", option="order")
    mesh = _skfem_mesh(model.mesh)
    uniform = all(m.is_uniform for m in model.materials.values())
    element, scalar_element = ElementTetNedelec(order), ElementTetLagrange(order)
    # u·v of two order-k fields has degree 2k; a varying eps_r gets two degrees more.
    quadrature = get_quadrature(element.refdom, 2 * order + (0 if uniform else 2))
    dofs, scalar_dofs = Dofs(mesh, element), Dofs(mesh, scalar_element)

    facet_wall = _name_boundary_facets(model, mesh)
    essential = essential_kinds(form)
    essential_facets = np.array([f for f, name in facet_wall.items()
                                 if model.wall_kind(name) in essential], dtype=np.int64)
    fixed = (dofs.get_facet_dofs(essential_facets).all() if essential_facets.size
             else np.zeros(0, dtype=np.int64))
    constraint = Constraint.keeping(dofs.N, np.setdiff1d(np.arange(dofs.N), fixed))
    fixed_scalar = (scalar_dofs.get_facet_dofs(essential_facets).all() if essential_facets.size
                    else np.zeros(0, dtype=np.int64))
    scalar_constraint = Constraint.keeping(scalar_dofs.N, _ground(
        mesh, np.setdiff1d(np.arange(scalar_dofs.N), fixed_scalar)))
    if model.periodic:   # a periodic cell: one face's DOFs follow the other's (fem.periodic)
        constraint, scalar_constraint = periodic_constraints(
            model, mesh, facet_wall, dofs, scalar_dofs, fixed, fixed_scalar, order)

    x = mesh.mapping().F(quadrature[0])
    eps, mu = with_absorbing_layers(model, x, *_coefficients(model, x,
                                                             losses_inside=losses_inside))
    stiffness_coef, mass_coef = (inverse(mu), eps) if form == "E" else (inverse(eps), mu)
    return EdgeSpace(model=model, form=form, order=order, mesh=mesh, element=element,
                     scalar_element=scalar_element, quadrature=quadrature, dofs=dofs,
                     scalar_dofs=scalar_dofs, constraint=constraint,
                     scalar_constraint=scalar_constraint,
                     stiffness_coef=stiffness_coef, mass_coef=mass_coef, facet_wall=facet_wall)


def _skfem_mesh(tm):
    """A scikit-fem mesh with sorted vertices; quadratic (curved) when the mesh has 10-node
    tetrahedra, whose edge midpoints then define an isoparametric map per element."""
    from skfem import MeshTet, MeshTet2

    n_corners = int(tm.tets.max()) + 1          # corners come first in TaggedMesh.points
    corners = np.ascontiguousarray(tm.points[:n_corners].T)
    linear = MeshTet(corners, np.ascontiguousarray(tm.tets.T), sort_t=True)
    if tm.tets10 is None:
        return linear
    key = lambda a, b: np.minimum(a, b) * n_corners + np.maximum(a, b)
    edge_keys = key(linear.edges[0], linear.edges[1])
    order = np.argsort(edge_keys)
    midpoints = np.empty((3, linear.edges.shape[1]))
    for k, (a, b) in enumerate(((0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3))):
        where = order[np.searchsorted(edge_keys[order], key(tm.tets10[:, a], tm.tets10[:, b]))]
        midpoints[:, where] = tm.points[tm.tets10[:, 4 + k]].T
    return MeshTet2(np.hstack([corners, midpoints]), linear.t)


def _name_boundary_facets(model: Model, mesh) -> dict[int, str]:
    """Wall name of every boundary facet; "" for a facet no surface group names."""
    boundary = mesh.boundary_facets()
    index = {tuple(mesh.facets[:, f]): int(f) for f in boundary}
    names = {v: k for k, v in model.mesh.wall_names.items()}
    facet_wall = {int(f): "" for f in boundary}
    for tri, tag in zip(np.sort(model.mesh.faces, axis=1), model.mesh.face_tag):
        facet = index.get(tuple(tri))
        if facet is not None:  # tagged interfaces between regions are not walls
            facet_wall[facet] = names[int(tag)]
    return facet_wall


def _ground(mesh, nodes: np.ndarray) -> np.ndarray:
    """Drop one vertex DOF of every connected piece that no essential wall touches.

    ``nodes`` are scalar-space DOFs; the first ``nvertices`` of them are the vertices.

    A constant potential has no gradient, so without an essential wall the scalar space has
    one null vector per piece; removing one node per such piece leaves the range of the
    discrete gradient unchanged and makes G^T M G invertible.
    """
    n = mesh.nvertices
    t = mesh.t
    rows = np.repeat(t, t.shape[0], axis=0).ravel()
    cols = np.tile(t, (t.shape[0], 1)).ravel()
    graph = sp.coo_matrix((np.ones(rows.size), (rows, cols)), shape=(n, n))
    _, label = connected_components(graph, directed=False)
    keep = np.ones(max(n, int(nodes.max()) + 1 if nodes.size else n), dtype=bool)
    is_free = np.zeros(keep.size, dtype=bool)
    is_free[nodes] = True
    for piece in np.unique(label):
        members = np.flatnonzero(label == piece)
        if np.all(is_free[members]):
            keep[members[0]] = False
    return nodes[keep[nodes]]


def _coefficients(model: Model, x: np.ndarray, *, losses_inside: bool = False
                  ) -> tuple[np.ndarray, np.ndarray]:
    """eps_r and mu_r at the quadrature points x (3, n_elements, n_points): shape
    (n_elements, n_points), or (n_elements, n_points, 3, 3) when a region is anisotropic;
    complex with ``losses_inside`` (eps_r (1 - j tan δ), a uniaxial eps_r with a tan δ per
    direction, mu_r (1 - j mu_tan_delta)) or complex tensors."""
    tm = model.mesh
    materials = [(model.materials[name], tm.tet_region == rid)
                 for name, rid in tm.region_names.items()]
    tensor = any(not m.is_isotropic for m, _ in materials)
    lossy = losses_inside and any(m.lossy for m, _ in materials)
    complex_values = lossy or any(np.iscomplexobj(t) for m, _ in materials
                                  for t in (m.eps_tensor, m.mu_tensor) if t is not None)
    shape = x.shape[1:] + ((3, 3) if tensor else ())
    eps = np.empty(shape, dtype=complex if complex_values else float)
    mu = np.empty_like(eps)
    for (material, rows), name in zip(materials, tm.region_names):
        if material.eps_tensor is not None:
            eps[rows] = material.eps_tensor
        else:
            where = (x[0][rows], x[1][rows], x[2][rows])
            value = material.eps_at(*where)
            check_permittivity(value, where, field=f"regions.{name}.eps_r")
            eps[rows] = as_tensor(value) if tensor else value
        if losses_inside and material.lossy:
            eps[rows] = material.lossy_eps(eps[rows])
        if material.mu_tensor is not None:
            mu[rows] = material.mu_tensor
        else:
            mu[rows] = np.eye(3) * material.mu_r if tensor else material.mu_r
        if losses_inside and material.mu_tan_delta:
            mu[rows] *= 1 - 1j * material.mu_tan_delta
    return eps, mu
