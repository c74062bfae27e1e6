"""Absorbing regions (perfectly matched layers) on the meridional section of a body of
revolution: the 3D complex stretch of fem.absorber, seen on the (r, z) half-plane.

A layer that is a body of revolution about the z axis (a spherical one centred on the axis,
a cylindrical one about it, with caps beyond its top and bottom) maps (r, z) to (r̃, z̃) and
leaves φ alone. In the orthonormal frame (r̂, φ̂, ẑ) its Jacobian, taken with the metric
(the φ direction's length element is r dφ, stretched to r̃ dφ), is

    J = [[∂r̃/∂r, 0, ∂r̃/∂z],        J_t = the meridional 2x2 block,
         [0,   r̃/r,     0   ],        j_φ = r̃/r,
         [∂z̃/∂r, 0, ∂z̃/∂z]],

and a medium ε, μ seen through it is, as in 3D (Teixeira and Chew, IEEE Microwave Guided
Wave Lett. 7(11), 1997),

    ε' = det(J) J⁻¹ ε J⁻ᵀ,  i.e. for the layer's isotropic medium ε' = ε Λ with
    Λ_t = j_φ det(J_t) J_t⁻¹ J_t⁻ᵀ   (the meridional block, 2x2, complex symmetric),
    Λ_φφ = det(J_t) / j_φ,

and the same Λ for μ. Λ has no r-φ or z-φ entries, so the azimuthal orders stay
decoupled, and at the point (x, y, z) = (r, 0, z) the Cartesian frame is (r̂, φ̂, ẑ): Λ there
is exactly fem.absorber's 3D tensor at that point, which is how it is computed below (one
formula for 3D and sections). Spherical: J_t = s ρ̂ρ̂ᵀ + (ρ̃/ρ)(I - ρ̂ρ̂ᵀ) with ρ the distance
from the centre on the axis, and j_φ = ρ̃/ρ. Cylindrical: J_t = diag(s_r, s_z) (s_z ≠ 1 only
beyond the caps), j_φ = r̃/r. A "cartesian" layer on a section stretches r and z separately,
which is the cylindrical stretch (a box is no body of revolution; the φ factor must be r̃/r
for the stretch to be one of 3D space).

The section's forms (axisymmetric.space) with a tensor μ' (E form; ε' for the H form, the
roles exchanged): the meridional curl (∇×E)_t = R w / r, w = ∇u + m e_t, R the quarter turn,
so the stiffness's w-part weight is Rᵀ ν_t R = adj(ν_t) = μ'_t / det(μ'_t) (ν = μ'⁻¹), and
the curl e_t part's weight 1/μ'_φφ; the mass is ε'_t on r e_t·f_t and ε'_φφ on u v / r:

    K = ∫ [ (1/r) w·(μ'_t/det μ'_t) w' + r (1/μ'_φφ) curl e_t curl f_t ] dr dz,
    M = ∫ [ r e_t·ε'_t f_t + ε'_φφ u v / r ] dr dz.

With μ' = μ Λ: μ'_t/det μ'_t = (1/μ) Λ_t/det Λ_t. The factors Λ_t/det Λ_t, 1/Λ_φφ (stiffness)
and Λ_t, Λ_φφ (mass) are stored per quadrature point (``SectionStretch``) and multiply the
scalar coefficients of the forms, so lossy variants (losses inside the solve) reuse them. A
region uniaxial about z (never an absorbing one) keeps its own z coefficient, where Λ = I.
The kernel {(∇p, -m p)} is untouched (w = 0 and curl ∇p = 0 for any coefficient).

The layer's inner surface is found from the section as in 3D: the edges shared by the
region's triangles and the others, a circle centred on the axis or a rectangle's side and
caps fitted to their nodes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from skfem import BilinearForm

from ..errors import InputError
from ..fem.absorber import (Layer, _check_fit, absorbing_regions, stretch_jacobian,
                            stretched)


@dataclass(frozen=True)
class SectionStretch:
    """Per quadrature point (n_triangles, n_points): the factors the stretch puts on the
    forms' scalar coefficients (identity outside the layers)."""

    stiffness_rz: np.ndarray     # Λ_t / det Λ_t, (2, 2, n_triangles, n_points)
    stiffness_phi: np.ndarray    # 1 / Λ_φφ
    mass_rz: np.ndarray          # Λ_t
    mass_phi: np.ndarray         # Λ_φφ


def find_section_layers(model) -> list[Layer]:
    """The Layer (fem.absorber, in 3D terms: centre on the z axis) of every absorbing region
    of the axisymmetric ``model``, from its section."""
    return [find_section_layer(model.section, name, m.pml, m.pml_strength)
            for name, m in absorbing_regions(model).items()]


def find_section_layer(section, region: str, shape: str, strength: float) -> Layer:
    inside = section.tri_region == section.region_names[region]
    inner = section.points[_interface_nodes(section.triangles, inside)]
    every = section.points[np.unique(section.triangles[inside])]
    if inner.shape[0] < 3:
        raise InputError(f"the absorbing region {region!r} touches no other region; it must "
                         "wrap the part (air between part and layer)", field=f"regions.{region}")
    zeros = np.zeros(3)
    if shape == "spherical":     # r² + z² = 2 z zc + (R² - zc²): linear in zc and the rest
        A = np.column_stack([2 * inner[:, 1], np.ones(len(inner))])
        zc, rest = np.linalg.lstsq(A, np.sum(inner**2, axis=1), rcond=None)[0]
        radius = float(np.sqrt(rest + zc**2))
        _check_fit(np.hypot(inner[:, 0], inner[:, 1] - zc), radius,
                   "circle centred on the axis", region)
        depth = float(np.max(np.hypot(every[:, 0], every[:, 1] - zc))) - radius
        return Layer(region, shape, strength, np.array([0.0, 0.0, zc]), zeros,
                     np.array([radius, 0, 0]), zeros, np.array([depth, 0, 0]))
    z_low, z_high = float(inner[:, 1].min()), float(inner[:, 1].max())
    tol = 1e-6 * (z_high - z_low + np.ptp(inner[:, 0]))
    side = inner[(inner[:, 1] > z_low + tol) & (inner[:, 1] < z_high - tol), 0]
    if side.size == 0:
        raise InputError("the inner surface of this cylindrical layer has no side wall",
                         field=f"regions.{region}.pml")
    rho0 = float(np.mean(side))
    _check_fit(side, rho0, "cylinder about the z axis", region)
    return Layer(region, "cylindrical", strength, zeros.copy(), np.array([0.0, z_low, 0]),
                 np.array([rho0, z_high, 0]),
                 np.array([0.0, max(z_low - every[:, 1].min(), 0.0), 0]),
                 np.array([max(every[:, 0].max() - rho0, 0.0),
                           max(every[:, 1].max() - z_high, 0.0), 0]))


def _interface_nodes(triangles: np.ndarray, inside: np.ndarray) -> np.ndarray:
    """Nodes of the edges shared by a triangle of the region and one outside it."""
    edges = np.sort(triangles[:, [[0, 1], [1, 2], [2, 0]]].reshape(-1, 2), axis=1)
    _, which = np.unique(edges, axis=0, return_inverse=True)
    which = which.reshape(-1)
    owner = np.repeat(inside, 3)
    n = int(which.max()) + 1
    shared = (np.bincount(which[owner], minlength=n) == 1) & \
        (np.bincount(which[~owner], minlength=n) == 1)
    return np.unique(edges[shared[which] & owner])


def section_stretch(model, basis) -> SectionStretch | None:
    """The stretch factors at ``basis``'s quadrature points; None without absorbing
    regions."""
    layers = find_section_layers(model)
    if not layers:
        return None
    x = basis.mapping.F(basis.X)                     # (2, n_triangles, n_points)
    shape = x.shape[1:]
    lam = np.zeros(shape + (3, 3), dtype=complex)
    lam[...] = np.eye(3)
    section = model.section
    for layer in layers:
        rows = section.tri_region == section.region_names[layer.region]
        r, z = x[0, rows], x[1, rows]
        J = stretch_jacobian(layer, np.stack([r, np.zeros_like(r), z]))
        lam[rows] = stretched(np.ones(r.shape), J)   # at φ = 0: the (r̂, φ̂, ẑ) frame
    lam_t = np.moveaxis(lam[..., [0, 2], :][..., :, [0, 2]], (-2, -1), (0, 1))
    det_t = lam_t[0, 0] * lam_t[1, 1] - lam_t[0, 1] * lam_t[1, 0]
    lam_phi = lam[..., 1, 1]
    return SectionStretch(stiffness_rz=lam_t / det_t, stiffness_phi=1 / lam_phi,
                          mass_rz=lam_t, mass_phi=lam_phi)


# The forms with a 2x2 meridional weight (entries rr, rz, zz, complex symmetric) and a φ
# weight: w-part and curl part in the stiffness, e_t part and u part in the mass.

def _tensor_dot(x, y, w):
    return (w.rr * x[0] * y[0] + w.rz * (x[0] * y[1] + x[1] * y[0]) + w.zz * x[1] * y[1])


def _edge_edge(e, f, w):
    r = w.x[0]
    return w.m**2 * _tensor_dot(e, f, w) / r + w.phi * r * e.curl * f.curl


def _node_edge(u, f, w):
    return w.m * _tensor_dot(u.grad, f, w) / w.x[0]


def _node_node(u, v, w):
    return _tensor_dot(u.grad, v.grad, w) / w.x[0]


def _edge_mass(e, f, w):
    return w.x[0] * _tensor_dot(e, f, w)


def _node_mass(u, v, w):
    return w.phi * u * v / w.x[0]


FORMS = {name: BilinearForm(form, dtype=complex) for name, form in (
    ("edge_edge", _edge_edge), ("node_edge", _node_edge), ("node_node", _node_node),
    ("edge_mass", _edge_mass), ("node_mass", _node_mass))}


def _weights(rz: np.ndarray, phi: np.ndarray, c: np.ndarray, cz: np.ndarray | None,
             swap: bool) -> dict:
    """The form weights rr, rz, zz of rz @ diag(c, cz) (cz: the z direction's coefficient,
    c where None) and phi c; with ``swap`` rz @ diag(cz, c): the stiffness's w-part, whose
    r entry takes the z direction's coefficient (the meridional curl turns w a quarter). rz
    is diagonal wherever cz differs from c (absorbing regions are isotropic), so the result
    stays symmetric."""
    cz = c if cz is None else cz
    first, second = (cz, c) if swap else (c, cz)
    return {"rr": rz[0, 0] * first, "rz": rz[0, 1] * first, "zz": rz[1, 1] * second,
            "phi": phi * c}


def stretched_stiffness(space, a: np.ndarray, az: np.ndarray | None) -> sp.csr_matrix:
    """The section's full (unreduced) K with the scalar coefficient ``a`` (and ``az``, the z
    direction's, where a region is uniaxial about z) and the space's stretch."""
    s = space.stretch
    weights = {"m": float(space.m), **_weights(s.stiffness_rz, s.stiffness_phi, a, az, True)}
    eb, nb = space.edge_basis, space.node_basis
    K_ee = FORMS["edge_edge"].assemble(eb, **weights)
    K_ue = FORMS["node_edge"].assemble(nb, eb, **weights)
    K_uu = FORMS["node_node"].assemble(nb, **weights)
    return sp.bmat([[K_ee, K_ue], [K_ue.T, K_uu]], format="csr")


def stretched_mass(space, b: np.ndarray, bz: np.ndarray | None) -> sp.csr_matrix:
    """The section's full M with the scalar coefficient ``b`` (``bz`` as above) and the
    space's stretch."""
    s = space.stretch
    weights = _weights(s.mass_rz, s.mass_phi, b, bz, False)
    return sp.block_diag([FORMS["edge_mass"].assemble(space.edge_basis, **weights),
                          FORMS["node_mass"].assemble(space.node_basis, **weights)],
                         format="csr")
