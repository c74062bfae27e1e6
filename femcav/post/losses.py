"""Q factors of a mode by perturbation of the lossless solution.

Wall loss: P_wall = (R_s / 2) ∮ |H_t|² dS over the metal walls, with H from the curl of E (E
form) or H itself (H form) on the faces of the wall; Q_wall = ω W / P_wall with W = 2 W_e the
time-averaged stored energy. Dielectric loss: 1/Q_d = Σ_i p_i tan δ_i with p_i = W_e,i / W_e
the electric-energy filling factor of region i. 1/Q = 1/Q_wall + 1/Q_d. (D. M. Pozar,
Microwave Engineering, 4th ed., §6.1 and §6.3; common practice.) Volume integrals use the
quadrature of the space, face integrals a rule of degree 2k on each face for order k: exact
for |H_t|² of the order-k field in the H form, and for the curl of E in the E form.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ..fem.absorber import medium_coefficients
from ..fem.coefficients import inverse, quadratic
from ..fem.quadrature_fields import fields_at_quadrature
from ..fem.space import EdgeSpace
from ..wall_resistance import wall_surface_resistance
from .material_losses import MaterialLossTerms, material_loss_terms, needs_material_terms
from ..walls import METAL


@dataclass(frozen=True)
class LossReport:
    q_wall: float | None
    q_dielectric: float | None
    q_total: float | None
    wall_loss_share: dict[str, float] = field(default_factory=dict)
    region_loss_share: dict[str, float] = field(default_factory=dict)
    filling_factor: dict[str, float] = field(default_factory=dict)
    # time-averaged loss per area on each metal-wall face (W/m² for 1 J stored), in the order
    # of MetalFaces.facets
    wall_loss_density: np.ndarray | None = None
    # magnetic loss (post.material_losses): Q_m, and the directional electric filling of
    # uniaxial regions and the magnetic-energy filling of magnetically lossy ones
    q_magnetic: float | None = None
    filling_factor_parallel: dict[str, float] = field(default_factory=dict)
    filling_factor_perpendicular: dict[str, float] = field(default_factory=dict)
    magnetic_energy_filling: dict[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class MetalFaces:
    """The boundary faces of the metal walls, with what the loss integral needs of them."""

    facets: np.ndarray      # facet indices of the scikit-fem mesh
    wall: np.ndarray        # wall name per facet
    basis: object           # FacetBasis on those facets
    inverse_mu_r: np.ndarray   # μ_r⁻¹ of the element behind each facet, (n,) or (n, 3, 3)

    @property
    def area(self) -> np.ndarray:
        return np.sum(self.basis.dx, axis=1)


def metal_faces(space: EdgeSpace, elements: np.ndarray | None = None) -> MetalFaces | None:
    """The metal-wall faces (ascending facet index), or those of ``elements`` only."""
    from skfem import FacetBasis

    model = space.model
    pairs = sorted((f, name) for f, name in space.facet_wall.items()
                   if model.wall_kind(name) == METAL)
    if elements is not None:
        own = np.zeros(space.mesh.nelements, dtype=bool)
        own[elements] = True
        pairs = [(f, name) for f, name in pairs if own[space.mesh.f2t[0, f]]]
    if not pairs:
        return None
    facets = np.array([f for f, _ in pairs], dtype=np.int64)
    basis = FacetBasis(space.mesh, space.element, facets=facets, intorder=2 * space.order)
    elements = space.mesh.f2t[0, facets]
    inverse_mu = space.stiffness_coef if space.form == "E" else inverse(space.mass_coef)
    return MetalFaces(facets=facets, wall=np.array([n for _, n in pairs]), basis=basis,
                      inverse_mu_r=inverse_mu[elements, 0])   # constant per element


def _times_inverse_mu(inverse_mu: np.ndarray, curl: np.ndarray) -> np.ndarray:
    """μ_r⁻¹ curl E on facets: ``curl`` (3, n_facets, n_points), one μ_r⁻¹ per facet."""
    if inverse_mu.ndim == 3:
        return np.einsum("fij,jfq->ifq", inverse_mu, curl)
    return curl * inverse_mu[None, :, None]


def electric_energy_by_region(space: EdgeSpace, dofs: np.ndarray, omega: float,
                              part=None) -> dict:
    """∫ ε0 ε_r |E|² dV per region (4 W_e,i), for the mode's DOFs as stored; over the
    elements of ``part`` only (fields_at_quadrature) when given."""
    fields = fields_at_quadrature(space, dofs, part)
    stiffness, mass = medium_coefficients(space)    # absorbing layers: their real medium
    rows = slice(None) if part is None else part[0]
    stiffness, mass = stiffness[rows], mass[rows]
    if space.form == "E":
        integrand = quadratic(mass, fields.value) * epsilon_0
    else:  # E = ε_r⁻¹ curl H / (jω ε0): ε0 Ē·ε_r E = curl H̄·ε_r⁻¹ curl H / (ω² ε0)
        integrand = quadratic(stiffness, fields.curl) / (omega**2 * epsilon_0)
    per_element = np.sum(integrand * fields.dx, axis=1)
    tm = space.model.mesh
    region = tm.tet_region[rows]
    return {name: float(per_element[region == rid].sum())
            for name, rid in tm.region_names.items()}


def mode_losses(space: EdgeSpace, dofs: np.ndarray, frequency_hz: float,
                faces: MetalFaces | None) -> LossReport:
    omega = 2 * math.pi * frequency_hz
    power = None if faces is None else face_power(space, faces, dofs, omega)
    return losses_from_integrals(space, dofs, frequency_hz,
                                 electric_energy_by_region(space, dofs, omega),
                                 None if faces is None else (faces.wall, power, faces.area))


def face_power(space: EdgeSpace, faces: MetalFaces, dofs: np.ndarray,
               omega: float) -> np.ndarray:
    """(R_s / 2) ∫ |H_t|² dS on each face of ``faces`` (W, at the mode's stored scale)."""
    field_values = faces.basis.interpolate(dofs)
    if space.form == "E":   # |H| = |curl E| / (ω μ0 μ_r)
        H = _times_inverse_mu(faces.inverse_mu_r, field_values.curl) / (omega * mu_0)
    else:
        H = np.asarray(field_values)
    n = faces.basis.normals
    H_t = H - np.sum(H * n, axis=0) * n
    walls = space.model.walls
    rs = np.array([wall_surface_resistance(walls[w], omega) for w in faces.wall])
    loss_at_points = 0.5 * rs[:, None] * np.sum(np.abs(H_t) ** 2, axis=0)       # W/m²
    return np.sum(loss_at_points * faces.basis.dx, axis=1)


def losses_from_integrals(space: EdgeSpace, dofs: np.ndarray, frequency_hz: float,
                          energy: dict[str, float], walls: tuple | None) -> LossReport:
    """The Q factors from ∫ ε0 ε_r |E|² per region (``energy``) and, with metal walls,
    ``walls`` = (wall name, power (face_power), area) of every metal face: integrals that
    may come summed over the parts of a distributed mesh."""
    omega = 2 * math.pi * frequency_hz
    total_e = sum(energy.values())
    filling = {name: e / total_e for name, e in energy.items()}
    stored = 0.5 * total_e   # W = 2 W_e = 2 (1/4) ∫ ε |E|²

    materials = space.model.materials
    loss_terms = {name: filling[name] * materials[name].tan_delta for name in filling}
    media = (material_loss_terms(space, dofs, omega, total_e, filling)
             if needs_material_terms(materials) else MaterialLossTerms())
    loss_terms.update(media.dielectric_terms)     # uniaxial regions: a term per direction
    inverse_qm = sum(media.magnetic_terms.values())
    q_m = 1.0 / inverse_qm if inverse_qm > 0 else None
    inverse_qd = sum(loss_terms.values())
    q_d = 1.0 / inverse_qd if inverse_qd > 0 else None
    region_share = ({n: t / inverse_qd for n, t in loss_terms.items()} if inverse_qd > 0 else {})

    q_wall, wall_share, density = None, {}, None
    if walls is not None:
        wall, power, area = walls
        total_p = float(power.sum())
        q_wall = omega * stored / total_p
        wall_share = {str(w): float(power[wall == w].sum() / total_p)
                      for w in dict.fromkeys(wall)}
        density = power / area / stored
    inverse = sum(1.0 / q for q in (q_wall, q_d, q_m) if q)
    return LossReport(q_wall=q_wall, q_dielectric=q_d, q_total=1.0 / inverse if inverse else None,
                      wall_loss_share=wall_share, region_loss_share=region_share,
                      filling_factor=filling, wall_loss_density=density, q_magnetic=q_m,
                      filling_factor_parallel=media.filling_parallel,
                      filling_factor_perpendicular=media.filling_perpendicular,
                      magnetic_energy_filling=media.magnetic_filling)


def has_losses(space: EdgeSpace) -> bool:
    model = space.model
    return (any(m.lossy for m in model.materials.values())
            or any(w.kind == METAL for w in model.walls.values()))
