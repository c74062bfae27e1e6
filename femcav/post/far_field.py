"""The far field of a radiating mode of an open problem, from the fields on the absorbing
layer's inner surface.

Equivalence. Outside a closed surface S around every source, the field is that of the
surface currents J = n × H and M = −n × E on S (n pointing out). With the time dependence
e^{jωt}, far away (Balanis, Antenna Theory, 3rd ed., §12.2–12.3)

    E_θ = −jk e^{−jkr} / (4πr) (L_φ + η N_θ),   E_φ = jk e^{−jkr} / (4πr) (L_θ − η N_φ),
    N = ∮ J e^{jk r̂·r'} dS',   L = ∮ M e^{jk r̂·r'} dS',

and the radiation intensity is U = r² |E|² / (2η). S is the inner surface of the absorbing
layer (the facets between absorbing and other elements), which encloses the part whatever
the layer's shape; the fields there are the mode's own (the stretch starts at zero on that
surface). The part may be cut by symmetry planes: the surface is completed by reflecting
its facets, and the fields there follow the mode's class (post.point_fields.Mirror). k is
the real wavenumber Re ω / c: the pattern of the part driven at its resonance (with the
mode's complex k the exterior field grows with r, and on the dielectric sphere, Q 43, the
two powers below then differ by 1.6 % instead of 0.2 %).

Checks that come with it. The power through S, P = ½ Re ∮ (E × H*)·n dS, and the power of
the pattern, ∫ U dΩ, are two computations of the same radiated power (no loss between S and
infinity): their ratio is reported (``power_balance``). The stored energy W inside S (both
fields, quadrature of the space) then gives Q = Re ω W / P, a second radiation Q beside the
eigenvalue's (it counts only the energy inside S, so it reads low for a mode whose reactive
field reaches far beyond the part, i.e. at low Q).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import c as C0, epsilon_0, mu_0
from scipy.integrate import trapezoid

from ..fem.absorber import absorbing_regions, medium_coefficients
from ..fem.coefficients import quadratic
from ..fem.quadrature_fields import fields_at_quadrature
from .point_fields import NO_MIRROR, Mirror, fields_at_points

ETA0 = math.sqrt(mu_0 / epsilon_0)
# Directions of the pattern: θ from 0 to 180° and φ from 0 to 360° in these steps.
THETA_STEP_DEG = 5.0
PHI_STEP_DEG = 5.0
# How far a surface point is moved into its element on the part's side, as a share of the
# way to the element's centroid: the field is read inside that element, not the layer's.
INWARD = 1e-4
# Directions per block of the radiation integral (bounds the (points, directions) temporary).
BLOCK = 256
# A 3-point triangle rule, exact to degree 2 (Strang and Fix, An Analysis of the Finite
# Element Method, 1973, table 4.1): facets are small against the wavelength, and the
# 7-point rule of degree 5 changed the sphere's directivity by under 1e-4 at twice the time.
TRIANGLE_POINTS = np.array([[2 / 3, 1 / 6, 1 / 6], [1 / 6, 2 / 3, 1 / 6], [1 / 6, 1 / 6, 2 / 3]])
TRIANGLE_WEIGHTS = np.full(3, 1 / 3)


@dataclass(frozen=True)
class Surface:
    """Quadrature points on a closed surface: positions (n, 3) m, outward unit normals
    (n, 3), weights (n,) m², and for each point the element on the part's side."""

    points: np.ndarray
    normals: np.ndarray
    weights: np.ndarray


@dataclass(frozen=True)
class FarField:
    """One mode's radiation pattern over the direction grid, for 1 J stored in the part."""

    theta_deg: np.ndarray          # (n_theta,)
    phi_deg: np.ndarray            # (n_phi,)
    e_theta: np.ndarray            # (n_theta, n_phi) complex, r e^{jkr} E_θ, V
    e_phi: np.ndarray              # (n_theta, n_phi) complex, V
    radiated_power_w: float        # ∫ U dΩ
    flux_power_w: float            # ½ Re ∮ E × H* · n dS
    stored_energy_j: float         # inside the surface
    frequency_hz: float            # Re f

    @property
    def intensity(self) -> np.ndarray:
        """U (W/sr) per direction."""
        return (np.abs(self.e_theta) ** 2 + np.abs(self.e_phi) ** 2) / (2 * ETA0)

    @property
    def directivity(self) -> np.ndarray:
        """4π U / P per direction (dimensionless)."""
        return 4 * math.pi * self.intensity / self.radiated_power_w

    @property
    def peak_directivity_dbi(self) -> float:
        return 10 * math.log10(float(self.directivity.max()))

    @property
    def peak_direction_deg(self) -> tuple[float, float]:
        i, j = np.unravel_index(int(np.argmax(self.intensity)), self.intensity.shape)
        return float(self.theta_deg[i]), float(self.phi_deg[j])

    @property
    def power_balance(self) -> float:
        """Pattern power over flux power: 1 when both computations agree."""
        return self.radiated_power_w / self.flux_power_w

    @property
    def q_from_flux(self) -> float:
        return 2 * math.pi * self.frequency_hz * self.stored_energy_j / self.flux_power_w

    def document(self) -> dict:
        theta, phi = self.peak_direction_deg
        return {"directivity_dbi": self.peak_directivity_dbi,
                "peak_direction_deg": [theta, phi],
                "radiated_power_w_per_j": self.radiated_power_w,
                "power_balance": self.power_balance,
                "q_from_flux": self.q_from_flux}

    def rows(self):
        """(θ°, φ°, |E_θ|, |E_φ|, directivity dBi) per direction, θ fastest."""
        d = self.directivity
        for j, phi in enumerate(self.phi_deg):
            for i, theta in enumerate(self.theta_deg):
                yield (float(theta), float(phi), float(abs(self.e_theta[i, j])),
                       float(abs(self.e_phi[i, j])),
                       10 * math.log10(max(float(d[i, j]), 1e-30)))


def layer_surface(model) -> Surface:
    """The inner surface of the model's absorbing regions: one quadrature rule per facet
    shared by an absorbing element and an element of the part."""
    tm = model.mesh
    absorbing_ids = [tm.region_names[name] for name in absorbing_regions(model)]
    in_layer = np.isin(tm.tet_region, absorbing_ids)
    faces = np.sort(tm.tets[:, [[1, 2, 3], [0, 2, 3], [0, 1, 3], [0, 1, 2]]], axis=2)
    faces = faces.reshape(-1, 3)
    owner = np.repeat(np.arange(len(tm.tets)), 4)
    order = np.lexsort(faces.T[::-1])
    faces, owner = faces[order], owner[order]
    same = np.all(faces[1:] == faces[:-1], axis=1)
    first = np.flatnonzero(same)
    a, b = owner[first], owner[first + 1]
    crossing = in_layer[a] != in_layer[b]
    inner = np.where(in_layer[a], b, a)[crossing]
    corners = tm.points[faces[first][crossing]]                     # (n, 3, 3)
    normal = np.cross(corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0])
    area = 0.5 * np.linalg.norm(normal, axis=1)
    normal /= (2 * area)[:, None]
    centroid = tm.points[tm.tets[inner]].mean(axis=1)
    flip = np.einsum("ij,ij->i", normal, corners[:, 0] - centroid) < 0
    normal[flip] *= -1
    points = np.einsum("qk,fkj->fqj", TRIANGLE_POINTS, corners)       # (n, q, 3)
    points += INWARD * (centroid[:, None, :] - points)
    weights = area[:, None] * TRIANGLE_WEIGHTS[None, :]
    q = len(TRIANGLE_WEIGHTS)
    return Surface(points=points.reshape(-1, 3), normals=np.repeat(normal, q, axis=0),
                   weights=weights.ravel())


def completed(surface: Surface, mirror: Mirror) -> Surface:
    """The surface with its reflections across every cutting plane: the whole part's."""
    for axis, at in mirror.planes.items():
        i = "xyz".index(axis)
        points, normals = surface.points.copy(), surface.normals.copy()
        points[:, i] = 2 * at - points[:, i]
        normals[:, i] *= -1
        surface = Surface(points=np.vstack([surface.points, points]),
                          normals=np.vstack([surface.normals, normals]),
                          weights=np.concatenate([surface.weights, surface.weights]))
    return surface


def stored_energy_inside(space, dofs: np.ndarray, k0: complex) -> float:
    """Electric plus magnetic energy (J) outside the absorbing regions, for the scale of
    post.point_fields (xᵀ M x = 1 stores 1 J in a closed part): ½ ∫ c|u|² + ½ ∫ c'|∇×u|²/|k0|²."""
    fields = fields_at_quadrature(space, dofs)
    stiffness, mass = medium_coefficients(space)
    tm = space.model.mesh
    inside = ~np.isin(tm.tet_region, [tm.region_names[name]
                                      for name in absorbing_regions(space.model)])
    own = np.sum(quadratic(mass, fields.value) * fields.dx, axis=1)
    dual = np.sum(quadratic(stiffness, fields.curl) * fields.dx, axis=1) / abs(k0) ** 2
    return 0.5 * float(own[inside].sum() + dual[inside].sum())


def far_field(space, mode, *, mirror: Mirror = NO_MIRROR,
              surface: Surface | None = None) -> FarField:
    """The far field of ``mode`` (a mode of an open problem with a complex frequency)."""
    f = complex(mode.complex_frequency_hz)
    omega = 2 * math.pi * f
    k = omega / C0
    dofs = space.full_vectors(mode.dofs)
    surface = completed(surface or layer_surface(space.model), mirror)
    cuts = len(mirror.planes)
    fields = fields_at_points(space, dofs, omega, surface.points, mirror=mirror,
                              label=mode.symmetry, cuts=cuts)
    J = np.cross(surface.normals, fields.H)
    M = -np.cross(surface.normals, fields.E)
    flux = 0.5 * float(np.real(np.sum(surface.weights * np.einsum(
        "ij,ij->i", np.cross(fields.E, np.conj(fields.H)), surface.normals))))
    theta = np.radians(np.arange(0.0, 180.0 + THETA_STEP_DEG / 2, THETA_STEP_DEG))
    phi = np.radians(np.arange(0.0, 360.0, PHI_STEP_DEG))
    T, P = np.meshgrid(theta, phi, indexing="ij")
    r_hat = np.stack([np.sin(T) * np.cos(P), np.sin(T) * np.sin(P), np.cos(T)], -1).reshape(-1, 3)
    t_hat = np.stack([np.cos(T) * np.cos(P), np.cos(T) * np.sin(P), -np.sin(T)], -1).reshape(-1, 3)
    p_hat = np.stack([-np.sin(P), np.cos(P), np.zeros_like(P)], -1).reshape(-1, 3)
    N = np.empty((len(r_hat), 3), complex)
    L = np.empty_like(N)
    for start in range(0, len(r_hat), BLOCK):
        rows = slice(start, start + BLOCK)
        phase = np.exp(1j * k.real * (surface.points @ r_hat[rows].T)) * surface.weights[:, None]
        N[rows] = phase.T @ J
        L[rows] = phase.T @ M
    dot = lambda a, b: np.einsum("ij,ij->i", a, b)
    e_theta = -1j * k.real / (4 * math.pi) * (dot(L, p_hat) + ETA0 * dot(N, t_hat))
    e_phi = 1j * k.real / (4 * math.pi) * (dot(L, t_hat) - ETA0 * dot(N, p_hat))
    shape = T.shape
    e_theta, e_phi = e_theta.reshape(shape), e_phi.reshape(shape)
    U = (np.abs(e_theta) ** 2 + np.abs(e_phi) ** 2) / (2 * ETA0)
    power = _sphere_integral(U, theta, phi)
    return FarField(theta_deg=np.degrees(theta), phi_deg=np.degrees(phi), e_theta=e_theta,
                    e_phi=e_phi, radiated_power_w=power, flux_power_w=flux,
                    stored_energy_j=stored_energy_inside(space, dofs, k),
                    frequency_hz=f.real)


def _sphere_integral(U: np.ndarray, theta: np.ndarray, phi: np.ndarray) -> float:
    """∫ U dΩ over the grid: trapezoid in θ (with sin θ), the periodic rule in φ."""
    over_phi = U.mean(axis=1) * 2 * math.pi
    return float(trapezoid(over_phi * np.sin(theta), theta))
