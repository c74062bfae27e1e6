"""Absorbing regions (perfectly matched layers) as position-dependent complex material
tensors, so that an open resonator is solved as a closed one with one linear eigenproblem.

The layer is a complex coordinate stretch x -> x̃(x) that is the identity inside the layer's
inner surface. A medium eps, mu seen through the stretch is, in real coordinates, the medium

    eps' = det(J) J⁻¹ eps J⁻ᵀ,   mu' = det(J) J⁻¹ mu J⁻ᵀ,   J = ∂x̃/∂x

(the invariance of Maxwell's equations under a change of coordinates; e.g. Teixeira and
Chew, IEEE Microwave Guided Wave Lett. 7(11), 1997, for the spherical and cylindrical
layers). Every J here is symmetric, so eps' and mu' are complex symmetric and the pencil stays
complex symmetric (the "arnoldi" backend applies).

Stretch profile (time dependence e^{jωt}, outgoing waves e^{-jkr}): with ξ the depth into the
layer beyond its inner surface and d its thickness, the stretched coordinate is

    q̃ = q - j σ d (ξ/d)³,   so   s = dq̃/dq = 1 - 3 j σ (ξ/d)²,

a quadratic growth of the imaginary stretch (common practice: it keeps the discrete
reflection at the inner surface small). The stretch does not depend on frequency, so the
eigenproblem stays linear in k0²; a wave crossing the layer and back from its PEC outer wall
is damped by exp(-2 σ k d) (k the wavenumber in the layer's medium), which is printed.

Shapes:
- "spherical": r about a centre; J = s r̂r̂ᵀ + (r̃/r)(I - r̂r̂ᵀ), so for a scalar medium
  Λ = det(J) J⁻¹J⁻ᵀ = (r̃²/(r² s)) r̂r̂ᵀ + s (I - r̂r̂ᵀ).
- "cylindrical": ρ about an axis parallel to z, and z beyond the inner surface's top and
  bottom (the caps of a can-shaped layer): J = s_ρ ρ̂ρ̂ᵀ + (ρ̃/ρ) φ̂φ̂ᵀ + s_z ẑẑᵀ.
- "cartesian": each axis beyond the inner box: J = diag(s_x, s_y, s_z).

The layer's inner surface, centre or axis and thickness are found from the mesh: the inner
surface is the interface between the absorbing region and the rest of the mesh (a sphere,
circle or box fitted to its nodes, refused when they do not fit), the thickness from the
region's farthest nodes. A symmetry cut through the centre leaves the fit well posed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from scipy.constants import c as C0

from ..errors import InputError
from ..materials import Material

SHAPES = ("spherical", "cylindrical", "cartesian")
# σ: the imaginary stretch reaches σ times the thickness at the outer wall. A layer a
# twelfth of a wavelength thick (k d = 0.52) then damps the wave that crosses it and comes
# back by exp(-2 σ k d) = 2e-3, and thicker ones far more, while the field still varies
# slowly enough for two or three order-2 elements across the layer. Measured on the
# dielectric sphere (eps_r 80, TE, 1/8 model, layer 20 mm at 1.66 GHz): Q_rad error -3.6 %
# with σ = 3, -0.09 % with σ = 6.
DEFAULT_STRENGTH = 6.0
# the inner surface's nodes may stray this far (relative to its size) from the fitted shape
FIT_TOLERANCE = 2e-2


@dataclass(frozen=True)
class AbsorbingMaterial(Material):
    """A region's medium (eps_r, mu_r of the background, usually air) that is also a
    perfectly matched layer of ``pml`` shape and ``pml_strength`` σ."""

    pml: str = "spherical"
    pml_strength: float = DEFAULT_STRENGTH

    def __post_init__(self):
        super().__post_init__()
        if self.pml not in SHAPES:
            raise InputError(f"pml must be one of {', '.join(map(repr, SHAPES))}, got "
                             f"{self.pml!r}", field="pml")
        if not (math.isfinite(self.pml_strength) and self.pml_strength > 0):
            raise InputError(f"pml_strength must be a positive number, got "
                             f"{self.pml_strength!r}", field="pml_strength")
        if not self.is_isotropic or callable(self.eps_r):
            raise InputError("an absorbing region holds a uniform, isotropic medium (eps_r "
                             "and mu_r numbers)", field="eps_r")

    @property
    def is_uniform(self) -> bool:
        return False      # its coefficients vary with position: a richer quadrature


def absorbing_regions(model) -> dict[str, AbsorbingMaterial]:
    return {name: m for name, m in model.materials.items() if isinstance(m, AbsorbingMaterial)}


def has_absorber(model) -> bool:
    return bool(absorbing_regions(model))


def with_stronger_layers(model, factor: float):
    """``model`` with every absorbing region's strength times ``factor``."""
    return replace(model, materials={
        name: replace(m, pml_strength=m.pml_strength * factor)
        if isinstance(m, AbsorbingMaterial) else m for name, m in model.materials.items()})


@dataclass(frozen=True)
class Layer:
    """Where one absorbing region's stretch starts and how deep it goes.

    ``centre``: the sphere's centre, or a point of the cylinder's axis (parallel to z);
    ``inner_low``/``inner_high``: the inner surface's extent per stretched coordinate
    (spherical: r0 only, in inner_high[0]; cylindrical: (ρ0, z top) high and (-, z bottom)
    low; cartesian: the inner box); ``depth_low``/``depth_high``: the layer's thickness
    beyond them (0 where the layer has no side there)."""

    region: str
    shape: str
    strength: float
    centre: np.ndarray
    inner_low: np.ndarray
    inner_high: np.ndarray
    depth_low: np.ndarray
    depth_high: np.ndarray

    def describe(self, medium: Material, frequency_hz: float | None = None) -> str:
        mm = lambda v: f"{1e3 * v:.4g} mm"
        scale = float(np.max(np.abs([*self.inner_high, *self.depth_high])))
        centre = ", ".join(f"{1e3 * v:.4g}" if abs(v) > 1e-9 * scale else "0"
                           for v in self.centre)
        if self.shape == "spherical":
            where = (f"centre ({centre}) mm, inner radius {mm(self.inner_high[0])}, "
                     f"thickness {mm(self.depth_high[0])}")
        elif self.shape == "cylindrical":
            where = (f"axis through ({centre}) mm parallel to z, inner radius "
                     f"{mm(self.inner_high[0])}, radial thickness {mm(self.depth_high[0])}, "
                     f"caps {mm(self.depth_low[1])} below z = {mm(self.inner_low[1])} and "
                     f"{mm(self.depth_high[1])} above z = {mm(self.inner_high[1])}")
        else:
            sides = ", ".join(f"{a} {mm(lo)}/{mm(hi)}" for a, lo, hi
                              in zip("xyz", self.depth_low, self.depth_high))
            where = f"inner box {self.inner_low} .. {self.inner_high} m, thickness {sides}"
        text = f"absorbing region {self.region!r}: {self.shape} layer, {where}, strength " \
               f"{self.strength:g}"
        if frequency_hz:
            depths = [d for d in (*self.depth_low, *self.depth_high) if d > 0]
            k = 2 * math.pi * frequency_hz * math.sqrt(medium.eps_at(
                np.zeros(1), np.zeros(1), np.zeros(1))[0] * medium.mu_scalar) / C0
            text += (f"; round-trip damping exp(-2 σ k d) = "
                     f"{math.exp(-2 * self.strength * k * min(depths)):.1e} at "
                     f"{frequency_hz / 1e9:.6g} GHz")
        return text


def find_layers(model) -> list[Layer]:
    """The Layer of every absorbing region of ``model``, from its mesh."""
    return [find_layer(model.mesh, name, m.pml, m.pml_strength)
            for name, m in absorbing_regions(model).items()]


def find_layer(tm, region: str, shape: str, strength: float) -> Layer:
    rid = tm.region_names[region]
    inside = tm.tet_region == rid
    inner = tm.points[_interface_nodes(tm, inside)]
    every = tm.points[np.unique(tm.tets[inside])]
    if inner.shape[0] < 4:
        raise InputError(f"the absorbing region {region!r} touches no other region; it must "
                         "wrap the part (air between part and layer)", field=f"regions.{region}")
    zeros = np.zeros(3)
    if shape == "spherical":
        centre, r0 = _fit_sphere(inner, region)
        depth = float(np.max(np.linalg.norm(every - centre, axis=1))) - r0
        return Layer(region, shape, strength, centre, zeros, np.array([r0, 0, 0]), zeros,
                     np.array([depth, 0, 0]))
    if shape == "cylindrical":
        z_low, z_high = float(inner[:, 2].min()), float(inner[:, 2].max())
        tol = 1e-6 * (z_high - z_low + np.ptp(inner[:, 0]))
        side = inner[(inner[:, 2] > z_low + tol) & (inner[:, 2] < z_high - tol)]
        (cx, cy), rho0 = _fit_circle(side[:, :2], region)
        rho = np.hypot(every[:, 0] - cx, every[:, 1] - cy)
        return Layer(region, shape, strength, np.array([cx, cy, 0.0]),
                     np.array([0.0, z_low, 0]), np.array([rho0, z_high, 0]),
                     np.array([0.0, max(z_low - every[:, 2].min(), 0.0), 0]),
                     np.array([max(rho.max() - rho0, 0.0),
                               max(every[:, 2].max() - z_high, 0.0), 0]))
    low, high = inner.min(axis=0), inner.max(axis=0)
    return Layer(region, shape, strength, (low + high) / 2, low, high,
                 np.maximum(low - every.min(axis=0), 0.0), np.maximum(every.max(axis=0) - high,
                                                                       0.0))


def _interface_nodes(tm, inside: np.ndarray) -> np.ndarray:
    """Nodes of the faces shared by a tetrahedron of the region and one outside it (curved
    meshes: the corners; enough for the fit)."""
    local = np.array([[0, 1, 2], [0, 1, 3], [0, 2, 3], [1, 2, 3]])
    faces = np.sort(tm.tets[:, local].reshape(-1, 3), axis=1)
    _, which = np.unique(faces, axis=0, return_inverse=True)
    which = which.reshape(-1)
    owner_inside = np.repeat(inside, 4)
    n_unique = int(which.max()) + 1
    shared = ((np.bincount(which[owner_inside], minlength=n_unique) == 1)
              & (np.bincount(which[~owner_inside], minlength=n_unique) == 1))
    return np.unique(faces[shared[which] & owner_inside])


def _fit_sphere(p: np.ndarray, region: str) -> tuple[np.ndarray, float]:
    """Least squares |p - c|² = r²: linear in (c, r² - |c|²)."""
    A = np.hstack([2 * p, np.ones((p.shape[0], 1))])
    sol = np.linalg.lstsq(A, np.sum(p**2, axis=1), rcond=None)[0]
    centre = sol[:3]
    radius = math.sqrt(sol[3] + centre @ centre)
    _check_fit(np.linalg.norm(p - centre, axis=1), radius, "sphere", region)
    return centre, radius


def _fit_circle(p: np.ndarray, region: str) -> tuple[np.ndarray, float]:
    if p.shape[0] < 3:
        raise InputError("the inner surface of this cylindrical layer has no side wall",
                         field=f"regions.{region}.pml")
    A = np.hstack([2 * p, np.ones((p.shape[0], 1))])
    sol = np.linalg.lstsq(A, np.sum(p**2, axis=1), rcond=None)[0]
    centre = sol[:2]
    radius = math.sqrt(sol[2] + centre @ centre)
    _check_fit(np.linalg.norm(p - centre, axis=1), radius, "circle about an axis parallel "
               "to z", region)
    return centre, radius


def _check_fit(distances: np.ndarray, radius: float, what: str, region: str) -> None:
    stray = float(np.max(np.abs(distances - radius))) / radius
    if stray > FIT_TOLERANCE:
        raise InputError(f"the inner surface of the absorbing region {region!r} is not a "
                         f"{what} (its nodes stray {100 * stray:.2g} % from the best fit); "
                         "use another pml shape", field=f"regions.{region}.pml")


def stretch_jacobian(layer: Layer, x: np.ndarray) -> np.ndarray:
    """J = ∂x̃/∂x at points x (3, ...): shape (..., 3, 3), complex symmetric."""
    pts = np.moveaxis(x, 0, -1) - layer.centre            # (..., 3)
    sigma = layer.strength
    if layer.shape == "spherical":
        r = np.linalg.norm(pts, axis=-1)
        s, stretched = _stretch(r - layer.inner_high[0], layer.depth_high[0], sigma)
        unit = pts / r[..., None]
        radial = unit[..., :, None] * unit[..., None, :]
        ratio = (r + stretched) / r
        return s[..., None, None] * radial + ratio[..., None, None] * (np.eye(3) - radial)
    if layer.shape == "cylindrical":
        rho = np.hypot(pts[..., 0], pts[..., 1])
        s_rho, stretched = _stretch(rho - layer.inner_high[0], layer.depth_high[0], sigma)
        s_z = _two_sided(pts[..., 2] + layer.centre[2], layer, 1)
        unit = np.zeros_like(pts)
        unit[..., :2] = pts[..., :2] / np.where(rho > 0, rho, 1.0)[..., None]
        radial = unit[..., :, None] * unit[..., None, :]
        axial = np.zeros((3, 3))
        axial[2, 2] = 1.0
        azimuthal = np.eye(3) - axial - radial
        ratio = (rho + stretched) / np.where(rho > 0, rho, 1.0)
        return (s_rho[..., None, None] * radial + ratio[..., None, None] * azimuthal
                + s_z[..., None, None] * axial)
    J = np.zeros(pts.shape + (3,), dtype=complex)
    for axis in range(3):
        J[..., axis, axis] = _two_sided(pts[..., axis] + layer.centre[axis], layer, axis)
    return J


def _stretch(beyond: np.ndarray, depth: float, sigma: float) -> tuple[np.ndarray, np.ndarray]:
    """s = 1 - 3jσ(ξ/d)² and the imaginary offset q̃ - q = -jσ d (ξ/d)³ at depth ξ."""
    beyond = np.asarray(beyond, dtype=float)
    xi = np.clip(beyond, 0.0, None) / depth if depth > 0 else np.zeros_like(beyond)
    return 1 - 3j * sigma * xi**2, -1j * sigma * depth * xi**3


def _two_sided(q: np.ndarray, layer: Layer, axis: int) -> np.ndarray:
    """s of one coordinate stretched above inner_high and below inner_low."""
    high, _ = _stretch(q - layer.inner_high[axis], layer.depth_high[axis], layer.strength)
    low, _ = _stretch(layer.inner_low[axis] - q, layer.depth_low[axis], layer.strength)
    return high + low - 1


def stretched(c: np.ndarray, J: np.ndarray) -> np.ndarray:
    """det(J) J⁻¹ c J⁻ᵀ per point: c scalar (...) or tensor (..., 3, 3)."""
    inverse = np.linalg.inv(J)
    det = np.linalg.det(J)[..., None, None]
    if np.ndim(c) == J.ndim - 2:
        return det * c[..., None, None] * inverse @ np.swapaxes(inverse, -1, -2)
    return det * inverse @ c @ np.swapaxes(inverse, -1, -2)


def medium_coefficients(space) -> tuple[np.ndarray, np.ndarray]:
    """The space's (stiffness, mass) coefficients with every absorbing region's stretched
    tensors replaced by its real medium: the weights of a mode's energy as its field holds
    it (energies by region, filling factors, the absorber's share); the space's own when
    there is no absorbing region."""
    regions = absorbing_regions(space.model)
    if not regions:
        return space.stiffness_coef, space.mass_coef
    stiffness, mass = (np.real(c).copy() for c in (space.stiffness_coef, space.mass_coef))
    tm = space.model.mesh
    for name, medium in regions.items():
        rows = tm.tet_region == tm.region_names[name]
        eps, mu = float(medium.eps_r), float(medium.mu_r)
        own, other = (eps, mu) if space.form == "E" else (mu, eps)
        mass[rows] = own * np.eye(3)
        stiffness[rows] = np.eye(3) / other
    return stiffness, mass


def with_absorbing_layers(model, x: np.ndarray, eps: np.ndarray, mu: np.ndarray
                          ) -> tuple[np.ndarray, np.ndarray]:
    """eps_r and mu_r at the quadrature points x (3, n_elements, n_points) with every
    absorbing region's stretch applied (promoted to complex tensors); unchanged without
    absorbing regions."""
    layers = find_layers(model)
    if not layers:
        return eps, mu
    eps, mu = (np.array(c if c.ndim == 4 else c[..., None, None] * np.eye(3), dtype=complex)
               for c in (eps, mu))
    for layer in layers:
        rows = model.mesh.tet_region == model.mesh.region_names[layer.region]
        J = stretch_jacobian(layer, x[:, rows])
        eps[rows] = stretched(eps[rows], J)
        mu[rows] = stretched(mu[rows], J)
    return eps, mu
