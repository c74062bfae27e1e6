"""How far each mode drifts with temperature: df/dT and τf = (1/f) df/dT, to first order,
without re-meshing.

Three effects add (first order in the temperature change):

- permittivity: region i's ε_r changes by ε_r τε,i dT (τε = (1/ε) dε/dT, the region's
  ``tce``); a uniform relative change of ε in a region moves the eigenvalue by the region's
  share of the electric energy (first-order perturbation, post.sensitivity), so
  df/dT = -(f/2) Σ_i p_e,i τε,i, for scalar, expression and tensor ε alike; a uniaxial
  region may give one τε per direction, weighted by the energy along and across its axis
  (p⊥ τε⊥ + p∥ τε∥, post.material_losses);
- the housing: every length of the part grows by α_h dT (the walls' ``expansion``); a
  uniform scaling of every length by s scales every frequency by 1/s exactly (Maxwell's
  equations have no length of their own; common practice), so df/dT = -α_h f;
- the dielectric parts: a part whose ``expansion`` α_i differs from the housing's grows by
  (α_i - α_h) dT relative to it, from its base (a cylinder's first end face, a box's lowest
  corner: where it rests); the mesh is morphed onto the grown part (femcav.morph) and solved
  at ± dT, a central difference.

For a part filled with one medium (its dielectric expands with the housing) this gives
τf = -τε/2 - α exactly (to first order), the textbook rule for a dielectric resonator's
temperature coefficient (e.g. D. Kajfez and P. Guillon, Dielectric Resonators, 1986, ch. 1;
from memory). Parts that rest on other parts that grow differently are not lifted by them:
where two grown parts meet, the morph takes the mean of their motions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .case import TemperatureSpec, case_model
from .errors import InputError
from .geometry.parts import Layout
from .geometry.solids import Box, Cylinder
from .morph import STEP, morph, partner_frequencies, solve_morphed_meshes
from .post.mode_matching import result_partners
from .solver import solve_model


@dataclass(frozen=True)
class TemperatureDrift:
    """One mode's df/dT (Hz/K), its parts, and τf (ppm/K)."""

    df_dt_hz_per_k: float
    tau_f_ppm_per_k: float
    permittivity_hz_per_k: float      # from the regions' tce
    housing_hz_per_k: float           # -α_h f
    parts_hz_per_k: float             # the dielectric parts growing against the housing
    # with [temperature]: the mode followed over a range of temperatures (K, Hz; NaN where
    # it could not be followed), solved at each one (with_temperature_range)
    temperatures_k: tuple[float, ...] | None = None
    frequency_over_range_hz: tuple[float, ...] | None = None


def relative_growth(spec: TemperatureSpec, layout: Layout | None) -> dict[str, float]:
    """Fill region -> α_i - α_h for the parts that grow against the housing; InputError
    where that cannot be modelled (a region of the cavity's space, an imported mesh)."""
    differing = {name: alpha - spec.housing_expansion for name, alpha in spec.expansion.items()
                 if alpha != spec.housing_expansion}
    if not differing:
        return {}
    if layout is None:
        raise InputError("an imported mesh can only expand as a whole: give every region the "
                         "housing's expansion (or none)",
                         field=f"regions.{next(iter(differing))}.expansion")
    fills = {name for name, _ in layout.fills}
    for name in differing:
        if name not in fills:
            raise InputError(f"region {name!r} is the cavity's space, not a part of its own: "
                             f"it grows with the housing, so its expansion must be the "
                             f"housing's ({spec.housing_expansion * 1e6:g} ppm/K, from the "
                             f"walls' expansion)", field=f"regions.{name}.expansion")
    return differing


def grown_layout(layout: Layout, growth: dict[str, float], dt: float) -> Layout:
    """``layout`` with each fill of a region in ``growth`` grown by (1 + growth dt) from its
    base; the housing (space and metal) as it is."""
    return replace(layout, fills=[(name, _grown(solid, 1 + growth[name] * dt)
                                   if name in growth else solid)
                                  for name, solid in layout.fills])


def _grown(solid, factor: float):
    if isinstance(solid, Box):
        return Box(solid.corner, tuple(s * factor for s in solid.size))
    if isinstance(solid, Cylinder):
        return Cylinder(solid.base, tuple(a * factor for a in solid.axis),
                        solid.radius * factor)
    raise InputError("a part that grows against the housing must be a box or a cylinder",
                     field="regions")


def temperature_drift(case, result, spec: TemperatureSpec, electric_shares,
                      progress=None, pool=None) -> list[TemperatureDrift]:
    """Every mode's drift; ``electric_shares(k)`` gives mode k's shares of the electric
    energy per region and, for uniaxial regions, the shares along their axes (post.losses
    and post.material_losses, or their section counterparts)."""
    layout = _layout(case) if case.geometry.builder else None
    growth = relative_growth(spec, layout)
    parts = [0.0] * len(result.modes)
    if growth:
        parts = _parts_derivative(case, result, layout, growth, progress, pool)
    drifts = []
    for k, mode in enumerate(result.modes):
        f = mode.frequency_hz
        shares, along = electric_shares(k)
        permittivity = -0.5 * f * sum(_weighted(tce, shares[name], along.get(name, 0.0))
                                      for name, tce in spec.tce.items() if name in shares)
        housing = -spec.housing_expansion * f
        total = permittivity + housing + parts[k]
        drifts.append(TemperatureDrift(df_dt_hz_per_k=total, tau_f_ppm_per_k=1e6 * total / f,
                                       permittivity_hz_per_k=permittivity,
                                       housing_hz_per_k=housing, parts_hz_per_k=parts[k]))
    return drifts


def _weighted(tce, share: float, along: float) -> float:
    """p τε, or p⊥ τε⊥ + p∥ τε∥ for a tce per direction (p∥ = ``along``)."""
    if isinstance(tce, tuple):
        return (share - along) * tce[0] + along * tce[1]
    return share * tce


def _parts_derivative(case, result, layout: Layout, growth: dict[str, float], progress,
                      pool) -> list[float]:
    """d f/dT of the parts growing against the housing, by central differences on the mesh
    morphed to ± dT (dT such that the fastest part grows by femcav.morph.STEP)."""
    if case.symmetry:
        raise InputError("parts that expand unlike the housing need the whole part: drop "
                         "[symmetry]", field="symmetry")
    dt = STEP / max(abs(a) for a in growth.values())
    mesh = result.space.model.mesh
    meshes = [morph(mesh, layout, grown_layout(layout, growth, sign * dt)) for sign in (1, -1)]
    options = dict(modes=len(result.modes) + 3, near_hz=result.near_hz, form=result.form,
                   order=result.order)
    solved = solve_morphed_meshes(case, meshes, options, pool)
    plus, minus = (partner_frequencies(result, next(solved)) for _ in range(2))
    if progress:
        progress.step(f"temperature drift: parts growing against the housing, two morphed "
                      f"meshes at ±{dt:.3g} K")
    return [(p - m) / (2 * dt) if math.isfinite(p - m) else np.nan
            for p, m in zip(plus, minus)]


def with_temperature_drift(case, result, progress=None, pool=None):
    """``result`` (3D, or of a body of revolution on its section) with every mode's
    ``temperature`` (TemperatureDrift) from the case's thermal data."""
    directional = any(isinstance(t, tuple) for t in case.temperature.tce.values())
    if getattr(result, "spaces", None) is not None:
        from .axisymmetric.losses import axial_shares
        from .axisymmetric.losses import electric_energy_by_region as on_section

        def energy(space, dofs, omega):
            return on_section(space, dofs, omega)[0]

        def along_axes(space, dofs, omega, total, _):
            return axial_shares(space, dofs, omega, total)
        if relative_growth(case.temperature, _layout(case) if case.geometry.builder
                           else None):
            raise InputError("on a section, parts that expand unlike the housing are not "
                             "available yet; solve the part in 3D", field="regions")
    else:
        from .post.losses import electric_energy_by_region as energy
        from .post.material_losses import material_loss_terms

        def along_axes(space, dofs, omega, total, shares):
            return material_loss_terms(space, dofs, omega, total, shares).filling_parallel
    space_of = {i: space for _, space, positions in result.mode_spaces() for i in positions}

    def shares(k):
        mode, omega = result.modes[k], 2 * math.pi * result.modes[k].frequency_hz
        values = energy(space_of[k], mode.dofs, omega)
        total = sum(values.values())
        out = {name: v / total for name, v in values.items()}
        return out, (along_axes(space_of[k], mode.dofs, omega, total, out) if directional
                     else {})
    drifts = temperature_drift(case, result, case.temperature, shares, progress, pool)
    return replace(result, modes=[replace(m, temperature=d)
                                  for m, d in zip(result.modes, drifts)])


def _layout(case) -> Layout:
    from .geometry import builder_layout
    return builder_layout(case.geometry.builder, case.geometry.parameters)


def with_temperature_range(case, result, progress=None):
    """``result`` (3D, or of a body of revolution on its section) whose modes'
    ``temperature`` also holds the frequency at every temperature of the case's
    [temperature] range: each one a full solve, without re-meshing, of the part at
    T - T_ref: every region's ε_r times (1 + τε ΔT) (per direction for a uniaxial tce), the
    whole mesh (or section) scaled by (1 + α_h ΔT) (the housing), a part that grows unlike
    the housing morphed onto its grown shape (3D); each mode followed by its field from the
    reference solve outwards, temperature by temperature."""
    spec, span = case.temperature, case.temperature_range
    if case.symmetry:
        raise InputError("the temperature range solves the whole part: drop [symmetry]",
                         field="temperature")
    layout = _layout(case) if case.geometry.builder else None
    growth = relative_growth(spec, layout)
    on_section = getattr(result, "spaces", None) is not None
    mesh = result.mesh if on_section else result.space.model.mesh
    count = len(result.modes)
    temperatures = sorted(span.temperatures_k)
    reference = span.reference_k
    found: dict[float, list[float]] = {}
    for chain in ([t for t in temperatures if t >= reference],
                  [t for t in reversed(temperatures) if t < reference]):
        previous, index = result, list(range(count))    # reference mode k -> its index there
        for t in chain:
            solved = (_solve_section_at(case, result, mesh, t - reference) if on_section
                      else _solve_at(case, result, mesh, layout, growth, t - reference))
            partner = result_partners(previous, solved)
            successor = {int(p): j for j, p in enumerate(partner) if p >= 0}
            index = [None if i is None else successor.get(i) for i in index]
            found[t] = [np.nan if i is None else solved.modes[i].frequency_hz for i in index]
            previous = solved
            if progress:
                progress.step(f"temperature {t:.6g} K: "
                              + ", ".join(f"{f / 1e9:.7g}" for f in found[t][:4]) + " GHz")
    modes = []
    for k, mode in enumerate(result.modes):
        drift = mode.temperature
        modes.append(replace(mode, temperature=replace(
            drift, temperatures_k=tuple(temperatures),
            frequency_over_range_hz=tuple(float(found[t][k]) for t in temperatures))))
    return replace(result, modes=modes)


def _solve_at(case, result, mesh, layout, growth: dict[str, float], dt: float):
    """The case at ΔT = ``dt`` from its reference temperature, on the morphed and scaled
    mesh of the reference solve."""
    spec = case.temperature
    if growth:
        mesh = morph(mesh, layout, grown_layout(layout, growth, dt))
    mesh = replace(mesh, points=mesh.points * (1 + spec.housing_expansion * dt))
    model = case_model(replace(case, regions=_regions_at(case, dt)), mesh)
    return solve_model(model, modes=len(result.modes) + 3, near_hz=result.near_hz,
                       form=result.form, order=result.order)


def _solve_section_at(case, result, section, dt: float):
    """The body of revolution at ΔT = ``dt``, on the reference section scaled by the
    housing's growth (its parts grow with the housing: with_temperature_drift refuses
    others on a section), every azimuthal order of the reference solve."""
    from .axisymmetric.runner import case_section_model
    from .axisymmetric.solve import solve_axisymmetric

    spec = case.temperature
    section = replace(section, points=section.points * (1 + spec.housing_expansion * dt))
    model = case_section_model(replace(case, regions=_regions_at(case, dt)), section)
    return solve_axisymmetric(model, orders=tuple(result.spaces), modes=len(result.modes) + 3,
                              near_hz=result.near_hz, order=result.order, form=result.form)


def _regions_at(case, dt: float) -> dict:
    return {name: _material_at(material, case.temperature.tce.get(name), dt)
            for name, material in case.regions.items()}


def _material_at(material, tce, dt: float):
    """``material`` with ε_r (1 + τε ΔT): a scalar, an expression or a tensor scaled as a
    whole, a uniaxial one per direction for a (τε⊥, τε∥) pair."""
    if not tce:
        return material
    across, along = tce if isinstance(tce, tuple) else (tce, tce)
    if material.uniaxial is not None:
        u = material.uniaxial
        return replace(material, eps_r=1.0, uniaxial=replace(
            u, perpendicular=u.perpendicular * (1 + across * dt),
            parallel=u.parallel * (1 + along * dt)))
    factor = 1 + tce * dt
    eps = material.eps_r
    if callable(eps):
        return replace(material, eps_r=lambda x, y, z: eps(x, y, z) * factor)
    return replace(material, eps_r=np.asarray(eps) * factor if material.eps_tensor is not None
                   else eps * factor)

