"""Energies, field class and Q factors of one axisymmetric mode.

All integrals are over the section with the weight r of the volume element; the common
azimuthal factor (π for m >= 1, 2π for m = 0) cancels in every ratio below, so it is left
out. In the E form, electric energy: ε0 ε_r (r |e_t|² + u² / r). From ∇×E = -jωμ0 μ_r H,
with the meridional curl (1/r) rot(∇u + m e_t) and the azimuthal one curl e_t:

    |H_φ| ∝ |curl e_t|,   H_z ∝ (∂_r u + m e_r) / r,   H·n on a wall ∝ (∇u + m e_t)·n' / r,

n' the in-plane normal turned a quarter (the tangent along the section's boundary curve
for the meridional part of H_t). In the H form the same expressions give ∇×H = jωε0 ε_r E,
and H_t on a wall is the field itself. Q_wall = ω W / P_wall, W = 2 W_e, P_wall =
(R_s / 2) ∮ |H_t|² dS; 1/Q_d = Σ p_i tan δ_i (D. M. Pozar, Microwave Engineering, 4th ed.,
§6.1 and §6.3; common practice).

Field class (a heuristic, stated as such): the share of the electric energy in E_z and of
the magnetic energy in H_z, classed by post.classify.class_from_shares (the 3D rule and
threshold). For m = 0 exactly one of e_t and u is nonzero, so TE and TM are exact there.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ..post.classify import class_from_shares
from ..post.losses import LossReport
from ..post.sensitivity import sensitivities_from_densities
from ..wall_resistance import wall_surface_resistance
from ..walls import METAL
from .space import OrderSpace, facets_of, quadrature_order



def _split(space: OrderSpace, dofs: np.ndarray):
    full = space.constraint.expand(dofs)
    return full[:space.n_edge], full[space.n_edge:]


def _parts(space: OrderSpace, e, u, r):
    """Of the field F carried (E or H) and its curl, at the points of ``e``, ``u`` (its
    interpolated edge and node parts) and radius ``r``: the section densities, weight r
    included, ∫ |F|² r and ∫ |∇×F|² r with their z parts. With F = (f_t, u / r) and
    (∇×F) = ((∇u + m f_t)^⊥ / r, curl f_t): |F|² r = r |f_t|² + u² / r and
    |∇×F|² r = |∇u + m f_t|² / r + r (curl f_t)²."""
    f_t = np.asarray(e)
    meridional = np.asarray(u.grad) + space.m * f_t
    field = r * np.sum(_sq(f_t), axis=0) + _sq(np.asarray(u)) / r
    field_z = r * _sq(f_t[1])
    curl = np.sum(_sq(meridional), axis=0) / r + r * _sq(np.asarray(e.curl))
    curl_z = _sq(meridional[0]) / r
    return field, field_z, curl, curl_z


def _sq(x: np.ndarray) -> np.ndarray:
    """|x|²: the fields of a periodic cell's modes are complex."""
    return np.abs(x) ** 2 if np.iscomplexobj(x) else x**2


def _energy_densities(space: OrderSpace, dofs, omega: float):
    """Electric and magnetic energy densities ε0 ε_r |E|² r and μ0 μ_r |H|² r on the section's
    quadrature points, and their z parts. The field carried is one of them; the other comes
    from its curl (∇×E = -jωμ0 μ_r H, ∇×H = jωε0 ε_r E)."""
    e_dofs, u_dofs = _split(space, dofs)
    e = space.edge_basis.interpolate(e_dofs)
    u = space.node_basis.interpolate(u_dofs)
    r = space.edge_basis.mapping.F(space.edge_basis.X)[0]
    field, field_z, curl, curl_z = _parts(space, e, u, r)
    if space.eps_z is not None:
        return _uniaxial_densities(space, omega, field, field_z, curl, curl_z)
    if space.form == "E":
        to_h = 1.0 / (omega**2 * mu_0 * space.mu)
        return (epsilon_0 * space.eps * field, epsilon_0 * space.eps * field_z,
                to_h * curl, to_h * curl_z)
    to_e = 1.0 / (omega**2 * epsilon_0 * space.eps)
    return to_e * curl, to_e * curl_z, mu_0 * space.mu * field, mu_0 * space.mu * field_z


def _uniaxial_densities(space: OrderSpace, omega: float, field, field_z, curl, curl_z):
    """_energy_densities where a region is uniaxial about z: ε_zz (space.eps_z) weighs the z
    parts, ε_rr = ε_φφ (space.eps) the others; E = ε⁻¹ ∇×H component by component."""
    eps, eps_z = space.eps, space.eps_z
    if space.form == "E":
        to_h = 1.0 / (omega**2 * mu_0 * space.mu)
        return (epsilon_0 * (eps * (field - field_z) + eps_z * field_z),
                epsilon_0 * eps_z * field_z, to_h * curl, to_h * curl_z)
    to_e = 1.0 / (omega**2 * epsilon_0)
    return (to_e * ((curl - curl_z) / eps + curl_z / eps_z), to_e * curl_z / eps_z,
            mu_0 * space.mu * field, mu_0 * space.mu * field_z)


def electric_energy_by_region(space: OrderSpace, dofs, omega: float = 1.0
                              ) -> tuple[dict[str, float], float]:
    """∫ ε0 ε_r |E|² r per region (at angular frequency ``omega``, which scales it in the H
    form only), and the share of it in E_z."""
    electric, axial, _, _ = _energy_densities(space, dofs, omega)
    dx = space.edge_basis.dx
    per_cell = np.sum(electric * dx, axis=1)
    section = space.model.section
    energy = {name: float(per_cell[section.tri_region == rid].sum())
              for name, rid in section.region_names.items()}
    return energy, float(np.sum(axial * dx) / max(per_cell.sum(), np.finfo(float).tiny))


def material_sensitivities(space: OrderSpace, dofs, frequency_hz: float):
    """df/dε_r and df/dμ_r per region (post.sensitivity) for one mode of order m."""
    for name, material in space.model.materials.items():
        material.require_isotropic(name, "material sensitivities")
    electric, _, magnetic, _ = _energy_densities(space, dofs, 2 * math.pi * frequency_hz)
    section = space.model.section
    return sensitivities_from_densities(
        frequency_hz, space.edge_basis.dx, section.tri_region, section.region_names,
        (electric / space.eps, electric), (magnetic / space.mu, magnetic))


def axial_magnetic_share(space: OrderSpace, dofs) -> float:
    """The share of ∫ μ0 μ_r |H|² r in its z component."""
    _, _, magnetic, axial = _energy_densities(space, dofs, 1.0)
    dx = space.edge_basis.dx
    return float(np.sum(axial * dx) / max(np.sum(magnetic * dx), np.finfo(float).tiny))


def field_class(space: OrderSpace, dofs) -> str:
    """TE-like, TM-like, TEM-like or hybrid by post.classify's rule."""
    _, e_axial = electric_energy_by_region(space, dofs)
    return class_from_shares(e_axial, axial_magnetic_share(space, dofs))


def has_losses(space: OrderSpace) -> bool:
    model = space.model
    return (any(m.lossy for m in model.materials.values())
            or any(w.kind == METAL for w in model.walls.values()))


def mode_losses(space: OrderSpace, dofs, frequency_hz: float) -> LossReport:
    omega = 2 * math.pi * frequency_hz
    energy, _ = electric_energy_by_region(space, dofs, omega)
    total_e = sum(energy.values())
    filling = {name: value / total_e for name, value in energy.items()}
    stored = 0.5 * total_e
    materials = space.model.materials
    terms = {name: filling[name] * materials[name].tan_delta for name in filling}
    along = axial_shares(space, dofs, omega, total_e)     # uniaxial regions: E_z's share
    for name, parallel in along.items():
        u = materials[name].uniaxial
        terms[name] = ((filling[name] - parallel) * u.tan_delta_perpendicular
                       + parallel * u.tan_delta_parallel)
    inverse_qd = sum(terms.values())
    q_d = 1.0 / inverse_qd if inverse_qd > 0 else None
    region_share = {n: t / inverse_qd for n, t in terms.items()} if inverse_qd > 0 else {}

    powers = _wall_powers(space, dofs, omega)
    q_wall, wall_share = None, {}
    if powers:
        total_p = sum(powers.values())
        q_wall = omega * stored / total_p
        wall_share = {name: p / total_p for name, p in powers.items()}
    inverse = sum(1.0 / q for q in (q_wall, q_d) if q)
    return LossReport(q_wall=q_wall, q_dielectric=q_d, q_total=1.0 / inverse if inverse else None,
                      wall_loss_share=wall_share, region_loss_share=region_share,
                      filling_factor=filling, filling_factor_parallel=along,
                      filling_factor_perpendicular={n: filling[n] - p
                                                    for n, p in along.items()})


def axial_shares(space: OrderSpace, dofs, omega: float, total: float) -> dict[str, float]:
    """Region uniaxial about z -> the share of the whole section's electric energy in its
    E_z (ε_zz |E_z|²: the energy along its axis, post.material_losses)."""
    section = space.model.section
    uniaxial = [(name, rid) for name, rid in section.region_names.items()
                if space.model.materials[name].uniaxial is not None]
    if not uniaxial:
        return {}
    _, axial, _, _ = _energy_densities(space, dofs, omega)
    per_cell = np.sum(axial * space.edge_basis.dx, axis=1)
    return {name: float(per_cell[section.tri_region == rid].sum()) / total
            for name, rid in uniaxial}


def _wall_powers(space: OrderSpace, dofs, omega: float) -> dict[str, float]:
    """(R_s / 2) ∫ |H_t|² r dl on each metal wall of the section, W (same scale as W). H_t
    has the azimuthal part and the meridional part along the wall; in the E form both come
    from ∇×E / (ωμ0 μ_r), in the H form they are the field itself."""
    model, section = space.model, space.model.section
    mesh = space.edge_basis.mesh
    e_dofs, u_dofs = _split(space, dofs)
    mu_by_region = {rid: model.materials[name].mu_r for name, rid in section.region_names.items()}
    out = {}
    for name, tag in section.wall_names.items():
        if name == "axis" or model.wall_kind(name) != METAL:
            continue
        total = 0.0
        for eb, nb, normal, dl in _edge_bases(space, facets_of(mesh, section.edges[
                section.edge_tag == tag])):
            e, u = eb.interpolate(e_dofs), nb.interpolate(u_dofs)
            r = eb.mapping.F(eb.X, tind=eb.tind)[0]
            if space.form == "H":
                # |H_t|² r: u² / r (azimuthal) + r (h_t · tangent)², tangent = normal turned
                along = -np.asarray(e)[0] * normal[1] + np.asarray(e)[1] * normal[0]
                total += float(np.sum((_sq(np.asarray(u)) / r + r * _sq(along)) * dl))
                continue
            mu_r = np.array([mu_by_region[t] for t in section.tri_region[eb.tind]])
            meridional = np.asarray(u.grad) + space.m * np.asarray(e)
            # |curl E|_t² r: the azimuthal part and the meridional part along the wall
            curl_t_sq = (r * _sq(np.asarray(e.curl))
                         + _sq(np.einsum("ctq,ctq->tq", meridional, normal)) / r)
            total += float(np.sum(curl_t_sq / (omega * mu_0 * mu_r[:, None]) ** 2 * dl))
        wall = model.walls[name]
        out[name] = 0.5 * wall_surface_resistance(wall, omega) * total
    return out


# the reference triangle's edges in scikit-fem's order: (0,1), (1,2), (0,2)
_REFERENCE_EDGES = np.array([[[0.0, 0.0], [1.0, 0.0]], [[1.0, 0.0], [0.0, 1.0]],
                             [[0.0, 0.0], [0.0, 1.0]]])


def _edge_bases(space: OrderSpace, facets: np.ndarray):
    """Cell bases that evaluate the order space on boundary facets: one per local edge
    index, with Gauss points on that edge of the reference triangle (scikit-fem's facet
    bases do not take its higher-order Nédélec elements). Yields (edge basis, node basis,
    outward unit normals (2, n, n_points), length weights (n, n_points)); on curved
    triangles both come from the element map's derivative along the edge."""
    from skfem import CellBasis

    mesh = space.edge_basis.mesh
    s, w = np.polynomial.legendre.leggauss(quadrature_order(space.order) // 2 + 1)
    s, w = (s + 1) / 2, w / 2
    cells = mesh.f2t[0, facets]
    local = np.argmax(mesh.t2f[:, cells] == facets, axis=0)
    for j in range(3):
        chosen = local == j
        if not chosen.any():
            continue
        a, b = _REFERENCE_EDGES[j]
        X = (a[:, None] + np.outer(b - a, s))
        eb = CellBasis(mesh, space.edge_basis.elem, elements=cells[chosen], quadrature=(X, w))
        nb = CellBasis(mesh, space.node_basis.elem, elements=cells[chosen], quadrature=(X, w))
        DF = eb.mapping.DF(X, tind=cells[chosen])                 # (2, 2, n, n_points)
        tangent = np.einsum("ijtq,j->itq", DF, b - a)
        speed = np.linalg.norm(tangent, axis=0)                    # dl / ds
        normal = np.array([tangent[1], -tangent[0]]) / speed
        ends = mesh.p[:, mesh.facets[:, facets[chosen]]]          # (2, 2, n)
        inward = mesh.p[:, mesh.t[:, cells[chosen]]].mean(axis=1) - ends.mean(axis=1)
        normal *= np.where(np.einsum("itq,it->tq", normal, inward)[:, :1] > 0, -1.0, 1.0)
        yield eb, nb, normal, speed * w[None, :]


def cell_energy(space: OrderSpace, dofs, k0_squared: float) -> np.ndarray:
    """Electric plus magnetic energy of a mode per triangle of the section (relative scale,
    with the weight r): the carried field's mass density b (r |f_t|² + u²/r) plus its curl's
    stiffness density a (|∇u + m f_t|²/r + r |curl f_t|²) over k0², (a, b) = (1/μ_r, ε_r) in
    the E form and (1/ε_r, μ_r) in the H form."""
    e_dofs, u_dofs = _split(space, dofs)
    e = space.edge_basis.interpolate(e_dofs)
    u = space.node_basis.interpolate(u_dofs)
    r = space.edge_basis.mapping.F(space.edge_basis.X)[0]
    field, _, curl, _ = _parts(space, e, u, r)
    density = (space.mass_coef * field
               + space.stiffness_coef * curl / max(k0_squared, np.finfo(float).tiny))
    return np.sum(density * space.edge_basis.dx, axis=1)


def cell_scales(space: OrderSpace) -> tuple[np.ndarray, np.ndarray]:
    """Per triangle of the section: mean edge length (m) and sqrt(ε_r μ_r) (mean over its
    quadrature points). The azimuthal variation e^{jmφ} is exact, so only the section's
    element size counts."""
    from ..post.resolution import mean_edge_length

    section = space.model.section
    h = mean_edge_length(section.points, section.triangles)
    return h, np.sqrt(np.mean(space.eps * space.mu, axis=1))
