"""The group velocity of a periodic cell's mode from its fields: energy flux over stored
energy, v_g = ∫ Re S · d dV / ∫ w dV over the cell, d the unit vector of the cell's
translation (S = ½ E × H*, w = ¼ (ε|E|² + μ|H|²)). For a Floquet mode the power through every
cross-section is the same, so the volume integral of S·d is that power times the cell
length and the ratio is the power over the energy per length: the energy velocity, equal to
dω/dβ for a lossless periodic guide (P. Yeh, Optical Waves in Layered Media, ch. 6, from
memory). It checks the band slope without a neighbouring phase."""

from __future__ import annotations

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ..fem.quadrature_fields import fields_at_quadrature


def energy_velocity(space, dofs: np.ndarray, omega: float, direction) -> float:
    """v_g (m/s) along ``direction`` of the mode ``dofs`` (over every DOF) at ``omega``."""
    fields = fields_at_quadrature(space, dofs)
    d = np.asarray(direction, dtype=float)
    d = d / np.linalg.norm(d)
    u, c = fields.value, fields.curl
    # E form: u = E, curl E = -jωμ H. H form: u = H, curl H = jωε E. In both the flux is
    # Re(-j u × c*) a / (2ω ν0) with a the stiffness coefficient (1/μ_r, 1/ε_r) and ν0 the
    # constant of the curl term (μ0, ε0); the energies are the two terms of the form.
    inner, outer = (epsilon_0, mu_0) if space.form == "E" else (mu_0, epsilon_0)
    flux = np.real(-1j * np.einsum("i,ijk->jk", d, np.cross(u, c.conj(), axis=0)))
    flux = flux * space.stiffness_coef / (2 * omega * outer)
    energy = (0.25 * inner * space.mass_coef * np.sum(np.abs(u) ** 2, axis=0)
              + 0.25 * space.stiffness_coef * np.sum(np.abs(c) ** 2, axis=0)
              / (omega ** 2 * outer))
    return float(np.sum(flux * fields.dx) / np.sum(energy * fields.dx))
