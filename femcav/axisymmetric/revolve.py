"""The modes of the axisymmetric solver revolved into 3D, for the same VTK output as the 3D
path.

Every triangle of the section sweeps SEGMENTS wedges around the z axis; cell data are the
fields at each wedge's centre (the triangle's centroid at the wedge's mid-angle), for 1 J
stored energy, with the same names as the 3D file: ``region``, and per mode K ``mK_E``
(V/m), ``mK_H`` (A/m, in quadrature with E), ``mK_we`` and ``mK_wm`` (J/m³). For m >= 1
one member of the pair is shown: the one whose carried field (E in the E form, H in the H
form) has its r and z components ∝ cos mφ and its φ component ∝ sin mφ. ``absorber`` (1 in
absorbing regions) marks an open part's layer.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ..fem.absorber import absorbing_regions
from ..post.fields import most_real_phase
from .model import axial_uniaxial
from .solve import AxisymmetricResult

SEGMENTS = 36


def _centroid_fields(space, dofs):
    """The carried field's (f_r, f_φ, f_z) and its curl's (r, φ, z) amplitudes at the
    triangle centroids, without the azimuthal factors; also ε_r and μ_r there, and ε_zz
    (ε_r but where a region is uniaxial about z: then ε_r is its ε_rr = ε_φφ)."""
    from skfem import CellBasis

    full = space.constraint.expand(most_real_phase(dofs) if np.iscomplexobj(dofs) else dofs)
    X, W = np.array([[1 / 3], [1 / 3]]), np.array([1.0])
    eb = CellBasis(space.edge_basis.mesh, space.edge_basis.elem, quadrature=(X, W))
    nb = CellBasis(space.node_basis.mesh, space.node_basis.elem, quadrature=(X, W))
    e = eb.interpolate(full[:space.n_edge])
    u = nb.interpolate(full[space.n_edge:])
    r = eb.mapping.F(X)[0][:, 0]
    e_rz = np.asarray(e)[:, :, 0]
    u0, grad_u = np.asarray(u)[:, 0], np.asarray(u.grad)[:, :, 0]
    m = space.m
    meridional = (grad_u + m * e_rz) / r
    E = np.array([e_rz[0], u0 / r, e_rz[1]])
    curl = np.array([-meridional[1], -np.asarray(e.curl)[:, 0], meridional[0]])
    section = space.model.section
    eps = np.empty(r.size)
    mu = np.empty(r.size)
    for name, rid in section.region_names.items():
        cells = section.tri_region == rid
        material = space.model.materials[name]
        z = eb.mapping.F(X)[1][cells, 0]
        eps[cells] = material.eps_at(r[cells], np.zeros(cells.sum()), z)
        mu[cells] = material.mu_r
    eps_z = eps.copy()
    for name, rid in section.region_names.items():
        uniaxial = axial_uniaxial(space.model.materials[name])
        if uniaxial is not None:
            cells = section.tri_region == rid
            eps[cells], eps_z[cells] = uniaxial.perpendicular, uniaxial.parallel
    return E, curl, eps, mu, eps_z


def _stored_energy(space) -> float:
    """W = (ε0/2) ∫ ε_r |E|² dV (E form) or (μ0/2) ∫ μ_r |H|² dV (H form) of the
    M-normalised vector: the azimuthal integral of cos² or sin² is π (2π for m = 0) times
    the section integral, which is xᵀ M x = 1."""
    constant = epsilon_0 if space.form == "E" else mu_0
    return 0.5 * constant * (2 * math.pi if space.m == 0 else math.pi)


def revolved_grid(result: AxisymmetricResult, segments: int = SEGMENTS):
    """(points (n, 3), wedges (n_cells, 6), cell data dict) of the revolved part."""
    space0 = next(iter(result.spaces.values()))
    section = space0.model.section
    rz = section.points
    phis = np.linspace(0.0, 2 * math.pi, segments, endpoint=False)
    points = np.concatenate([np.column_stack([rz[:, 0] * math.cos(p), rz[:, 0] * math.sin(p),
                                              rz[:, 1]]) for p in phis])
    n, tri = rz.shape[0], section.triangles
    wedges = np.concatenate([np.hstack([tri + k * n, tri + ((k + 1) % segments) * n])
                             for k in range(segments)])
    mid = phis + math.pi / segments
    data = {"region": np.tile(section.tri_region, segments).astype("int32")}
    absorbing = [section.region_names[name] for name in absorbing_regions(space0.model)]
    if absorbing:    # an open part's layer, marked as in the 3D file
        data["absorber"] = np.tile(np.isin(section.tri_region, absorbing),
                                   segments).astype("int32")
    for mode in result.modes:
        space = result.spaces[mode.m]
        F, curl, eps, mu, eps_z = _centroid_fields(space, mode.dofs)
        omega = 2 * math.pi * mode.frequency_hz
        scale = 1.0 / math.sqrt(_stored_energy(space))
        m = mode.m
        c = np.cos(m * mid)[:, None]
        s = np.sin(m * mid)[:, None] if m else np.ones((segments, 1))
        # F = (f_r c, f_φ s, f_z c); ∇×F = (curl_r s, curl_φ c, curl_z s)  (m = 0: c = s = 1)
        field = [F[0] * c, F[1] * s, F[2] * c]
        # (E_z = (∇×H)_z / (ω ε0 ε_zz): the factor below divides by ε_rr)
        rotated = [curl[0] * s, curl[1] * c,
                   curl[2] * s * (1.0 if space.form == "E" else eps / eps_z)]
        # the other field from the curl: H = j∇×E/(ωμ0 μ_r), E = -j∇×H/(ωε0 ε_r), in
        # quadrature with the carried one
        if space.form == "E":
            parts = (("E", field, np.ones_like(mu)), ("H", rotated, 1.0 / (omega * mu_0 * mu)))
        else:
            parts = (("E", rotated, 1.0 / (omega * epsilon_0 * eps)), ("H", field, np.ones_like(mu)))
        cos_p, sin_p = np.cos(mid)[:, None], np.sin(mid)[:, None]
        tag = f"m{mode.index:02d}"
        squared = {}
        for name, (a_r, a_p, a_z), factor in parts:
            vec = (np.stack([a_r * cos_p - a_p * sin_p, a_r * sin_p + a_p * cos_p, a_z],
                            axis=-1) * (scale * factor)[None, :, None]).reshape(-1, 3)
            data[f"{tag}_{name}"] = vec.real
            squared[name] = np.abs(vec) ** 2
            if np.iscomplexobj(vec):   # a periodic cell's travelling wave: a quarter period on
                data[f"{tag}_{name}_quarter"] = vec.imag
        e_sq, h_sq = squared["E"], np.sum(squared["H"], axis=1)
        data[f"{tag}_we"] = 0.25 * epsilon_0 * (np.tile(eps, segments) * (e_sq[:, 0] + e_sq[:, 1])
                                                + np.tile(eps_z, segments) * e_sq[:, 2])
        data[f"{tag}_wm"] = 0.25 * mu_0 * np.tile(mu, segments) * h_sq
    return points, wedges, data


def write_revolved_vtu(result: AxisymmetricResult, path: Path) -> None:
    import meshio

    points, wedges, data = revolved_grid(result)
    meshio.write(str(path), meshio.Mesh(points, [("wedge", wedges)],
                                        cell_data={k: [v] for k, v in data.items()}),
                 file_format="vtu")
