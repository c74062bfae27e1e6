"""Discrete fields of one azimuthal order m on the meridional section, and their matrices.

The field E = (e_r cos mφ, e_φ sin mφ, e_z cos mφ) (m >= 1; for m = 0 the azimuthal part is
e_φ alone) is carried by e_t = (e_r, e_z) in Nédélec (edge) elements of the first kind of
order k and by u = r e_φ in Lagrange elements of order k, on the (r, z) section. With
that change of variables

    (∇×E)_φ ∝ curl e_t,    (∇×E)_{r,z} ∝ (1/r) rot (∇u + m e_t),

and the curl-curl eigenproblem ∇×(μ_r⁻¹∇×E) = k0² ε_r E becomes, after the φ integral
(a common factor π, or 2π for m = 0),

    K = ∫ μ_r⁻¹ [ (1/r) (∇u + m e_t)·(∇v + m f_t) + r curl e_t curl f_t ] dr dz,
    M = ∫ ε_r [ r e_t·f_t + u v / r ] dr dz.

Every gradient E = ∇(p cos mφ) maps to (e_t, u) = (∇p, -m p), and ∇P_k lies inside the
Nédélec space, so the discrete kernel is exactly {(∇p, -m p)}: the spectrum has no
spurious modes and the kernel is deflated like the 3D gradient kernel. The variables and
weights are those of A. D. Greenwood and J.-M. Jin, "A novel efficient algorithm for
scattering from a complex BOR using mixed finite elements and cylindrical PML", IEEE
Trans. Antennas Propag. 47(4) (1999) 620-629 (from memory); the kernel argument and the
axis conditions below are ours.

On the axis r = 0: u = 0 for every m (e_φ stays finite); for m >= 1 also the tangential
e_z = 0 (a field with cos mφ, m >= 1, has no axial part on the axis). The remaining axis
condition for m >= 1, ∂_r u + m e_r = 0, is left to the 1/r weight: the energy of a field
that breaks it grows without bound near the axis, so the discrete minimiser meets it in
the limit. Measured (pillbox, orders 2 and 3, h halved twice): the eigenvalue errors fall
as h^4 and h^6 for m = 0, 1 and 2 alike, the optimal rates.

The H form, ∇×(ε_r⁻¹∇×H) = k0² μ_r H, has the same structure with the roles of the
coefficients exchanged (stiffness ε_r⁻¹, mass μ_r) and H = (h_r cos mφ, h_φ sin mφ,
h_z cos mφ) carried the same way, since the curl-curl operator does not care which field it
acts on; its spectrum is the same (for m >= 1 a degenerate pair holds both parities).

Walls: in the E form PEC and metal fix the tangential e_t and u (e_φ) and PMC is natural;
in the H form PMC fixes them and PEC and metal are natural (femcav.walls.essential_kinds).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from skfem import (
    Basis,
    BilinearForm,
    ElementTriN1,
    ElementTriN2,
    ElementTriN3,
    ElementTriP1,
    ElementTriP2,
    ElementTriP3,
    MeshTri,
)
from skfem.helpers import dot

from ..errors import InputError
from ..fem.assembly import shared_entries_csr
from ..fem.constraints import Constraint
from ..fem.point_location import Transfer, evaluation_matrix
from ..materials import check_permittivity
from ..model import FORMS
from ..walls import PEC, PMC, essential_kinds
from .absorber import SectionStretch, section_stretch, stretched_mass, stretched_stiffness
from .model import AxisymmetricModel, axial_uniaxial
from .periodic import pair_lines, section_periodic_constraints

ELEMENTS = {1: (ElementTriN1, ElementTriP1), 2: (ElementTriN2, ElementTriP2),
            3: (ElementTriN3, ElementTriP3)}


@dataclass(frozen=True)
class OrderSpace:
    """The discrete space of azimuthal order ``m``: DOFs are [edge DOFs, node DOFs]."""

    model: AxisymmetricModel
    m: int
    order: int
    edge_basis: Basis
    node_basis: Basis
    constraint: Constraint      # the kept DOFs of the stacked vector
    potential_constraint: Constraint  # node DOFs p whose (∇p, -m p) is a kept kernel field
    eps: np.ndarray             # ε_r at the quadrature points (n_triangles, n_points)
    mu: np.ndarray              # μ_r there
    form: str = "E"             # the field carried: E or H
    # ε_zz where a region is uniaxial about z (then ``eps`` is ε_rr = ε_φφ); None: isotropic
    eps_z: np.ndarray | None = None
    # the absorbing regions' stretch factors (axisymmetric.absorber); None: no layer
    stretch: SectionStretch | None = None

    @property
    def stiffness_coef(self) -> np.ndarray:
        """1/μ_r in the E form, 1/ε_r in the H form."""
        return 1.0 / (self.mu if self.form == "E" else self.eps)

    @property
    def mass_coef(self) -> np.ndarray:
        """ε_r in the E form, μ_r in the H form."""
        return self.eps if self.form == "E" else self.mu

    @property
    def axial_coefficients(self) -> tuple[np.ndarray | None, np.ndarray | None]:
        """(stiffness, mass) coefficients of the z direction where they differ from the
        others (a region uniaxial about z): (None, ε_zz) in the E form, (1/ε_zz, None) in the
        H form; (None, None) for isotropic regions."""
        if self.eps_z is None:
            return None, None
        return (None, self.eps_z) if self.form == "E" else (1.0 / self.eps_z, None)

    @property
    def n_edge(self) -> int:
        return self.edge_basis.N

    @property
    def n_dofs(self) -> int:
        return self.constraint.size

    # The field-sampling protocol of fem.space.EdgeSpace, for comparing modes of two meshes
    # (post.field_overlap). A mode's stored vector is over the kept DOFs; its field is
    # F = (f_r, f_z, u / r), and the M-inner product is ∫ mass_coef F·G r dr dz.

    def samples(self) -> tuple[np.ndarray, np.ndarray]:
        """The quadrature points (2, P) in (r, z) and their weights mass_coef r dA."""
        basis = self.edge_basis
        x = basis.mapping.F(basis.X)
        return x.reshape(2, -1), (self.mass_coef * x[0] * basis.dx).ravel()

    def sampled_fields(self, vectors: np.ndarray) -> np.ndarray:
        """(3, P, n): the (r, z, φ) components of the columns' fields at ``samples()``."""
        full = self.constraint.expand(vectors)
        r = self.edge_basis.mapping.F(self.edge_basis.X)[0].ravel()
        out = []
        for j in range(full.shape[1]):
            f_t = np.asarray(self.edge_basis.interpolate(full[:self.n_edge, j]))
            u = np.asarray(self.node_basis.interpolate(full[self.n_edge:, j]))
            out.append(np.vstack([f_t.reshape(2, -1), u.reshape(1, -1) / r]))
        return np.stack(out, axis=2)

    def full_vectors(self, stored: np.ndarray) -> np.ndarray:
        """Stored (kept-DOF) mode vectors over every DOF of the section: one length for
        every azimuthal order, so that modes of all orders can be kept side by side."""
        return self.constraint.expand(stored)

    def stored_vectors(self, full: np.ndarray) -> np.ndarray:
        return self.constraint.P.T @ full       # P only selects: Pᵀ P = I

    def field_reader(self, points: np.ndarray) -> Transfer:
        """A Transfer: stored vector -> the (r, z, φ) components at ``points`` (2, n)."""
        edge = evaluation_matrix(self.edge_basis, points)
        node = evaluation_matrix(self.node_basis, points)
        over_r = sp.diags(1.0 / points[0])
        matrix = sp.block_diag([edge.matrix, over_r @ node.matrix], format="csr")
        return Transfer(matrix=(matrix @ self.constraint.P).tocsr(), n_points=edge.n_points,
                        outside_points=max(edge.outside_points, node.outside_points),
                        worst_barycentric=min(edge.worst_barycentric,
                                              node.worst_barycentric))


def quadrature_order(order: int) -> int:
    """The 1/r weights are not polynomials: two degrees above the product of the bases."""
    return 2 * order + 2


def skfem_mesh(model: AxisymmetricModel) -> MeshTri:
    """A scikit-fem mesh of the section; quadratic (isoparametric) when it has 6-node
    triangles, with the edge midpoints placed where the section's nodes are."""
    section = model.section
    n_corners = int(section.triangles.max()) + 1     # corners come first in points
    linear = MeshTri(np.ascontiguousarray(section.points[:n_corners].T),
                     np.ascontiguousarray(section.triangles.T))
    if section.triangles6 is None:
        return linear
    from skfem import MeshTri2

    def key(a, b):
        return np.minimum(a, b) * n_corners + np.maximum(a, b)
    facet_keys = key(linear.facets[0], linear.facets[1])
    order = np.argsort(facet_keys)
    midpoints = np.empty((2, linear.facets.shape[1]))
    for k, (a, b) in enumerate(((0, 1), (1, 2), (2, 0))):
        t6 = section.triangles6
        where = order[np.searchsorted(facet_keys[order], key(t6[:, a], t6[:, b]))]
        midpoints[:, where] = section.points[t6[:, 3 + k]].T
    return MeshTri2(np.hstack([linear.p, midpoints]), linear.t)


def build_order_space(model: AxisymmetricModel, m: int, order: int,
                      mesh: MeshTri | None = None, form: str = "E") -> OrderSpace:
    if order not in ELEMENTS:
        raise InputError(f"the axisymmetric solver has element orders 1, 2 and 3, got "
                         f"{order!r}", option="order")
    if not isinstance(m, int) or m < 0:
        raise InputError(f"azimuthal orders are whole numbers >= 0, got {m!r}",
                         option="azimuthal_orders")
    mesh = skfem_mesh(model) if mesh is None else mesh
    edge_element, node_element = ELEMENTS[order]
    intorder = quadrature_order(order)
    edge_basis = Basis(mesh, edge_element(), intorder=intorder)
    node_basis = Basis(mesh, node_element(), intorder=intorder)

    if form not in FORMS:
        raise InputError(f"unknown field form {form!r}; allowed: {', '.join(FORMS)}",
                         option="form")
    # Boundary facets: on the axis (both ends at r = 0), on a PMC wall, and all others PEC or
    # metal, named or not (an unnamed boundary is the metal enclosure, as in 3D). The walls
    # whose kind is essential in this form fix their tangential DOFs.
    section = model.section
    boundary = mesh.boundary_facets()
    on_axis = np.all(mesh.p[0, mesh.facets[:, boundary]] == 0.0, axis=0)
    axis = boundary[on_axis]
    pmc = np.concatenate([np.zeros(0, np.int64)] + [
        facets_of(mesh, section.edges[section.edge_tag == tag])
        for name, tag in section.wall_names.items()
        if name != "axis" and model.wall_kind(name) == PMC])
    # a periodic cell's end lines are neither walls nor open: their DOFs are tied instead
    lines = pair_lines(model, mesh, facets_of) if model.periodic else []
    tied = np.concatenate([np.zeros(0, np.int64)] + [np.concatenate(l[:2]) for l in lines])
    pec = np.setdiff1d(boundary[~on_axis], np.concatenate([pmc, tied]))
    walls = pec if PEC in essential_kinds(form) else np.unique(pmc)
    fixed_edge = set(edge_basis.get_dofs(walls).all().tolist())
    wall_nodes = set(node_basis.get_dofs(walls).all().tolist())
    axis_nodes = set(node_basis.get_dofs(axis).all().tolist())
    if m >= 1:
        fixed_edge |= set(edge_basis.get_dofs(axis).all().tolist())
    fixed_node = wall_nodes | axis_nodes
    free_edge = np.setdiff1d(np.arange(edge_basis.N), np.array(sorted(fixed_edge), dtype=int))
    free_node = np.setdiff1d(np.arange(node_basis.N), np.array(sorted(fixed_node), dtype=int))
    constraint = Constraint.keeping(edge_basis.N + node_basis.N,
                                    np.concatenate([free_edge, edge_basis.N + free_node]))
    # A kernel field (∇p, -m p) must vanish where the DOFs are fixed: p = 0 on the walls, and
    # for m >= 1 on the axis too; for m = 0 only ∇p enters there, and e_t is free on the axis.
    zero_potential = wall_nodes | (axis_nodes if m >= 1 else set())
    potentials = np.setdiff1d(np.arange(node_basis.N),
                              np.array(sorted(zero_potential), dtype=int))
    if m == 0 and not zero_potential:
        # nothing grounds the potential (H form, no PMC wall): a constant p has no gradient,
        # so one node is dropped to keep the kernel basis independent
        potentials = potentials[1:]
    potential_constraint = Constraint.keeping(node_basis.N, potentials)
    if lines:
        constraint, potential_constraint = section_periodic_constraints(
            model, edge_basis, node_basis, lines, fixed_edge, fixed_node,
            set(np.setdiff1d(np.arange(node_basis.N), potentials).tolist()))

    eps, mu = _coefficients(model, edge_basis)
    return OrderSpace(model=model, m=m, order=order, edge_basis=edge_basis,
                      node_basis=node_basis, constraint=constraint,
                      potential_constraint=potential_constraint, eps=eps, mu=mu, form=form,
                      eps_z=axial_permittivity(model, eps),
                      stretch=section_stretch(model, edge_basis))


def facets_of(mesh: MeshTri, edges: np.ndarray) -> np.ndarray:
    """Facet indices of the mesh for (n, 2) vertex pairs."""
    if edges.size == 0:
        return np.zeros(0, dtype=np.int64)
    n = mesh.p.shape[1]
    keys = np.sort(mesh.facets, axis=0)
    order = np.argsort(keys[0] * n + keys[1])
    sorted_keys = (keys[0] * n + keys[1])[order]
    e = np.sort(edges, axis=1)
    wanted = e[:, 0] * n + e[:, 1]
    pos = np.searchsorted(sorted_keys, wanted)
    if np.any(pos >= sorted_keys.size) or np.any(sorted_keys[np.minimum(pos, sorted_keys.size - 1)]
                                                  != wanted):
        raise InputError("a named boundary edge of the section is not an edge of its triangles",
                         source=None)
    return order[pos]


def axial_permittivity(model: AxisymmetricModel, eps: np.ndarray) -> np.ndarray | None:
    """ε_zz at the quadrature points when a region is uniaxial about z (``eps`` elsewhere);
    None when every region is isotropic."""
    section = model.section
    axial = {name: axial_uniaxial(model.materials[name]) for name in section.region_names}
    if not any(axial.values()):
        return None
    out = eps.copy()
    for name, rid in section.region_names.items():
        if axial[name] is not None:
            out[section.tri_region == rid] = axial[name].parallel
    return out


def _coefficients(model: AxisymmetricModel, basis: Basis):
    section = model.section
    x = basis.mapping.F(basis.X)                   # (2, n_triangles, n_points)
    r, z = x[0], x[1]
    eps = np.empty_like(r)
    mu = np.empty_like(r)
    for name, rid in section.region_names.items():
        cells = section.tri_region == rid
        material = model.materials[name]
        if axial_uniaxial(material) is not None:   # ε_rr = ε_φφ here; ε_zz in eps_z
            eps[cells] = axial_uniaxial(material).perpendicular
            mu[cells] = material.mu_r
            continue
        eps[cells] = material.eps_at(r[cells], np.zeros_like(r[cells]), z[cells])
        check_permittivity(eps[cells], (r[cells], np.zeros_like(r[cells]), z[cells]),
                           field=f"regions.{name}.eps_r")
        mu[cells] = material.mu_r
    return eps, mu


@BilinearForm
def _edge_edge(e, f, w):
    r = w.x[0]
    return w.a * (w.m**2 * dot(e, f) / r + r * e.curl * f.curl)


@BilinearForm
def _node_edge(u, f, w):        # trial u (node), test f (edge)
    return w.a * w.m * dot(u.grad, f) / w.x[0]


@BilinearForm
def _node_node(u, v, w):
    return w.a * dot(u.grad, v.grad) / w.x[0]


@BilinearForm
def _edge_mass(e, f, w):
    return w.b * w.x[0] * dot(e, f)


# A uniaxial ε about z (axis_weights below): the r and z parts of the fields get their own
# coefficients. The meridional curl (∇×F)_{r,z} = (-(∂_z u + m f_z), ∂_r u + m f_r) / r swaps
# the components of ∇u + m f_t, so in the stiffness the r part of that vector takes the z
# coefficient; ``w.az`` is the stiffness coefficient of the z direction, ``w.bz`` the mass's.
def _axial_dot(x, y, across, along):
    return along * x[0] * y[0] + across * x[1] * y[1]


@BilinearForm
def _edge_edge_axial(e, f, w):
    r = w.x[0]
    return w.m**2 * _axial_dot(e, f, w.a, w.az) / r + w.a * r * e.curl * f.curl


@BilinearForm
def _node_edge_axial(u, f, w):
    return w.m * _axial_dot(u.grad, f, w.a, w.az) / w.x[0]


@BilinearForm
def _node_node_axial(u, v, w):
    return _axial_dot(u.grad, v.grad, w.a, w.az) / w.x[0]


@BilinearForm
def _edge_mass_axial(e, f, w):
    return w.x[0] * (w.b * e[0] * f[0] + w.bz * e[1] * f[1])


@BilinearForm
def _node_mass(u, v, w):
    return w.b * u * v / w.x[0]


def assemble_order(space: OrderSpace):
    """(K, M) over the kept DOFs."""
    axial_stiffness, axial_mass = space.axial_coefficients
    return (assemble_stiffness(space, space.stiffness_coef, axial_stiffness),
            assemble_mass(space, space.mass_coef, axial_mass))


def assemble_stiffness(space: OrderSpace, a: np.ndarray, az: np.ndarray | None = None):
    """K over the kept DOFs with the coefficient ``a`` at the quadrature points (1/μ_r in the
    E form, 1/ε_r in the H form, or a lossy variant of it); ``az``: that of the z direction
    where it differs (1/ε_zz of a uniaxial region in the H form)."""
    if space.stretch is not None:
        return space.constraint.reduce(stretched_stiffness(space, a, az))
    eb, nb = space.edge_basis, space.node_basis
    coefficient = {"m": float(space.m), "a": a}
    forms = (_edge_edge, _node_edge, _node_node)
    if az is not None:
        coefficient["az"] = az
        forms = (_edge_edge_axial, _node_edge_axial, _node_node_axial)
    K_ee = forms[0].assemble(eb, **coefficient)
    K_ue = forms[1].assemble(nb, eb, **coefficient)        # rows edge, columns node
    K_uu = forms[2].assemble(nb, **coefficient)
    return space.constraint.reduce(sp.bmat([[K_ee, K_ue], [K_ue.T, K_uu]], format="csr"))


def assemble_mass(space: OrderSpace, b: np.ndarray, bz: np.ndarray | None = None):
    """M over the kept DOFs with the coefficient ``b`` at the quadrature points (ε_r in the E
    form, μ_r in the H form, or the lossy part of a complex permittivity); ``bz``: that of
    the z direction where it differs (ε_zz of a uniaxial region in the E form)."""
    if space.stretch is not None:
        return space.constraint.reduce(stretched_mass(space, b, bz))
    edge = (_edge_mass.assemble(space.edge_basis, b=b) if bz is None
            else _edge_mass_axial.assemble(space.edge_basis, b=b, bz=bz))
    M = sp.block_diag([edge, _node_mass.assemble(space.node_basis, b=b)], format="csr")
    return space.constraint.reduce(M)


def kernel_basis(space: OrderSpace) -> sp.csr_matrix:
    """G (kept DOFs x kept potentials): the fields (∇p, -m p) of the node basis functions p,
    which span the kernel of K. The edge part is the local L2 projection of ∇p on every
    triangle, exact because ∇p is a Nédélec field there."""
    eb, nb = space.edge_basis, space.node_basis
    weights = eb.dx                                        # (n_triangles, n_points)
    phi = np.stack([np.asarray(b[0]) for b in eb.basis])         # (n_e, 2, n_triangles, n_points)
    grad = np.stack([b[0].grad for b in nb.basis])         # (n_n, 2, n_triangles, n_points)
    local_mass = np.einsum("ictq,jctq,tq->tij", phi, phi, weights)
    local_load = np.einsum("ictq,jctq,tq->tij", phi, grad, weights)
    local = np.linalg.solve(local_mass, local_load)        # (n_triangles, n_e, n_n)
    rows = np.broadcast_to(eb.element_dofs.T[:, :, None], local.shape)
    cols = np.broadcast_to(nb.element_dofs.T[:, None, :], local.shape)
    keep = np.abs(local) > 1e-10 * np.abs(local).max()
    G_edge = shared_entries_csr(rows[keep], cols[keep], local[keep], (eb.N, nb.N))
    G = sp.vstack([G_edge, -space.m * sp.identity(nb.N, format="csr")], format="csr")
    return (space.constraint.restrict_rows(G) @ space.potential_constraint.P).tocsr()
