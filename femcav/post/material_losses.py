"""The loss terms of anisotropic and magnetic materials, by perturbation of the lossless mode.

A uniaxial region (axis a, fem: femcav.anisotropy) stores Ē·ε E = ε⊥ |E⊥|² + ε∥ |a·E|², so
its share of the electric energy splits into p∥ = ∫ ε∥ |a·E|² / ∫ Ē·ε E (over the whole
part) and p⊥ = p - p∥, and its dielectric loss term is p⊥ tan δ⊥ + p∥ tan δ∥: the two loss
tangents each weighted by the energy stored across and along the axis (common practice for
sapphire resonators; e.g. J. Krupka et al., Meas. Sci. Technol. 10 (1999) 387, from memory).
A magnetic loss tangent (μ_r (1 - j tan δ_m)) gives 1/Q_m = Σ_i p_m,i tan δ_m,i with p_m,i
the region's share of the magnetic energy ∫ μ0 H̄·μ_r H (D. M. Pozar, Microwave
Engineering, 4th ed., §6.1, the magnetic counterpart of the dielectric Q; common practice).
Both are first order in the loss tangents; the complex solve with the losses inside the
operator (fem.space.build_space(..., losses_inside=True)) is the check.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ..fem.coefficients import apply, quadratic
from ..fem.quadrature_fields import fields_at_quadrature


@dataclass(frozen=True)
class MaterialLossTerms:
    # uniaxial regions: share of the whole part's electric energy along / across the axis
    filling_parallel: dict[str, float] = field(default_factory=dict)
    filling_perpendicular: dict[str, float] = field(default_factory=dict)
    # regions with a magnetic loss tangent: share of the magnetic energy (with μ_r)
    magnetic_filling: dict[str, float] = field(default_factory=dict)
    # region -> its dielectric loss term (uniaxial regions) and magnetic loss term
    dielectric_terms: dict[str, float] = field(default_factory=dict)
    magnetic_terms: dict[str, float] = field(default_factory=dict)


def needs_material_terms(materials) -> bool:
    """Whether any region has a uniaxial eps_r or a magnetic loss tangent."""
    return any(m.uniaxial is not None or m.mu_tan_delta > 0 for m in materials.values())


def material_loss_terms(space, dofs: np.ndarray, omega: float, electric_total: float,
                        filling: dict[str, float]) -> MaterialLossTerms:
    """The terms above for one mode; ``electric_total`` is ∫ ε0 Ē·ε_r E dV over the part
    in the scale of post.losses.electric_energy_by_region, ``filling`` each region's share
    of it."""
    fields = fields_at_quadrature(space, dofs)
    tm = space.model.mesh
    materials = space.model.materials
    if space.form == "E":   # E is the unknown; ε0 Ē·ε E as in electric_energy_by_region
        E, electric_scale = fields.value, epsilon_0
        magnetic_density = quadratic(space.stiffness_coef, fields.curl) / (omega**2 * mu_0)
    else:                   # E ∝ ε_r⁻¹ curl H: the same scale as ε_r⁻¹ curl H̄·curl H
        E, electric_scale = apply(space.stiffness_coef, fields.curl), 1 / (omega**2
                                                                           * epsilon_0)
        magnetic_density = mu_0 * quadratic(space.mass_coef, fields.value)
    magnetic = np.sum(magnetic_density * fields.dx, axis=1)
    magnetic_total = float(magnetic.sum())
    out = MaterialLossTerms()
    for name, rid in tm.region_names.items():
        material, rows = materials[name], tm.tet_region == rid
        if material.mu_tan_delta > 0:
            share = float(magnetic[rows].sum()) / magnetic_total
            out.magnetic_filling[name] = share
            out.magnetic_terms[name] = share * material.mu_tan_delta
        uniaxial = material.uniaxial
        if uniaxial is None:
            continue
        along = np.einsum("i,ieq->eq", np.asarray(uniaxial.axis), E[:, rows])
        parallel = float(np.sum(uniaxial.parallel * np.abs(along) ** 2 * fields.dx[rows])
                         * electric_scale) / electric_total
        region = filling[name]
        out.filling_parallel[name] = parallel
        out.filling_perpendicular[name] = region - parallel
        out.dielectric_terms[name] = ((region - parallel) * uniaxial.tan_delta_perpendicular
                                      + parallel * uniaxial.tan_delta_parallel)
    return out
