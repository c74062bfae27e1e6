"""How a mode's frequency moves with the permittivity or permeability of a region, without
solving again: first-order perturbation of the eigenvalue.

For K x = λ M x with x the mode, dλ = xᵀ (dK - λ dM) x / xᵀ M x (design.md §2). In the E form
M = Σ_i ε_i M_i, so adding δ to ε_r in region i gives dλ/λ = -δ xᵀ M_i x / xᵀ M x; and
K = Σ_i K_i / μ_i gives dλ/λ = -δ xᵀ K_i x / (μ_i² xᵀ K x). With f ∝ sqrt(λ):

    df/dε_r,i = -(f/2) ∫_i ε0 |E|² dV / ∫ ε0 ε_r |E|² dV,
    df/dμ_r,i = -(f/2) ∫_i μ0 |H|² dV / ∫ μ0 μ_r |H|² dV,

the classic material-perturbation result (R. F. Harrington, Time-Harmonic Electromagnetic
Fields, 1961, §7-2; D. M. Pozar, Microwave Engineering, 4th ed., §6.7, both from memory),
here for a uniform change δ of ε_r or μ_r across the whole region (also where ε_r is an
expression). In the H form the roles of E and H swap, and the field not solved for comes
from the curl of the one that is.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class MaterialSensitivity:
    """df/dε_r and df/dμ_r of one mode per region, in Hz per unit change."""

    eps_r: dict[str, float]
    mu_r: dict[str, float]

    def as_dict(self) -> dict:
        return {"eps_r": dict(self.eps_r), "mu_r": dict(self.mu_r)}


def material_sensitivities(space, dofs: np.ndarray, frequency_hz: float
                           ) -> MaterialSensitivity:
    """df/dε_r and df/dμ_r per region for one mode of a 3D edge space."""
    for name, material in space.model.materials.items():
        material.require_isotropic(name, "material sensitivities")
    values = space.basis.interpolate(dofs)
    u_sq = np.sum(np.abs(np.asarray(values)) ** 2, axis=0)
    curl_sq = np.sum(np.abs(np.asarray(values.curl)) ** 2, axis=0)
    s, m = np.real(space.stiffness_coef), np.real(space.mass_coef)
    if space.form == "E":        # u = E, curl u ∝ μ_r H
        electric_unit, electric = u_sq, m * u_sq
        magnetic_unit, magnetic = s**2 * curl_sq, s * curl_sq
    else:                        # u = H, curl u ∝ ε_r E
        electric_unit, electric = s**2 * curl_sq, s * curl_sq
        magnetic_unit, magnetic = u_sq, m * u_sq
    mesh = space.model.mesh
    return sensitivities_from_densities(frequency_hz, space.basis.dx, mesh.tet_region,
                                        mesh.region_names, (electric_unit, electric),
                                        (magnetic_unit, magnetic))


def sensitivities_from_densities(frequency_hz: float, weight: np.ndarray,
                                 cell_region: np.ndarray, region_names: dict[str, int],
                                 electric: tuple, magnetic: tuple) -> MaterialSensitivity:
    """The formula above from energy densities at quadrature points (cells, points), any
    discretisation: ``electric`` = (|E|² without ε_r, ε_r |E|²), ``magnetic`` likewise with
    μ_r; each pair in one unit, whichever; ``weight`` the quadrature weights (times r on a
    meridional section)."""
    def per_region(unit, total):
        cells = np.sum(unit * weight, axis=1)
        whole = float(np.sum(total * weight))
        return {name: -0.5 * frequency_hz * float(cells[cell_region == rid].sum()) / whole
                for name, rid in region_names.items()}
    return MaterialSensitivity(eps_r=per_region(*electric), mu_r=per_region(*magnetic))
