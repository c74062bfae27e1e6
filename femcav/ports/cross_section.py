"""A port's face and the modes (TE, TM, TEM) of the waveguide whose cross-section it is.

The face must be planar (one plane through every facet, one outward normal n) and on the
outside of the part (boundary facets of the mesh); the filling behind it must be isotropic,
lossless and uniform in each element. One material: the TE, TM and TEM modes below. Several
(a layered guide): hybrid modes, solved at each frequency by ports.layered_face.

All three kinds of mode of a homogeneous guide of any shape are found on the traces of the 3D
Nédélec space itself (rather than on a separate 2D mesh), so their patterns lie exactly in
the space the 3D field's trace lives in: the termination (ports.termination) couples them
without projection error, and the cut-offs converge like the 3D eigenvalues. On the face the
tangential trace e of the 3D space is a 2D edge-element field, and the surface curl n·∇×e
depends on that trace alone.

TE modes. The 2D eigenproblem

    ∫ (n·∇×e)(n·∇×v) dS = k_c² ∫ e·v dS     for all traces v, with e×n = 0 on the rim

(the rim's edges lie on the PEC walls around the port) is the transverse-field form of the
guide's TE modes: its non-zero eigenvalues are the TE cut-off wavenumbers k_c² (the Neumann
problem ∇_t²ψ + k_c²ψ = 0, ∂ψ/∂ν = 0, with e_t = ∇_tψ × n, in mixed form). Its kernel holds
the curl-free traces: the surface gradients, and on a face with several rims the harmonic
fields.

TM modes. Their transverse field is the surface gradient of the axial field, e_t ∝ ∇_t E_z
with −∇_t²E_z = k_c² E_z and E_z = 0 on the rim (Pozar, Microwave Engineering, 4th ed.,
§3.1). E_z is sought in the Lagrange space of the same order on the face (the trace of the
3D scalar space whose gradients form the kernel basis); the discrete gradient B maps it
exactly into the trace space (∇P_k ⊂ NED_k), so the stiffness ∫ ∇φ·∇ψ dS is Bᵀ M B with the
face mass M, and the pattern of a TM mode is B φ.

TEM modes. On a face with r separate rims (a coaxial line: the inner and the outer
conductor) the kernel of the TE problem is larger than the surface gradients of potentials
that vanish on the rim by r − 1 harmonic fields, −∇_t V of the potentials that are constant
on each conductor (V = 1 on one, 0 on the other): what is left of the kernel once the range
of B is removed (M-orthogonally). Their cut-off is 0, β = k, and their wave admittance that
of the filling, 1/η (Pozar, §3.1, §3.5).

All modes of the face are ordered by cut-off; the ``port_modes`` lowest are terminated. A
mode propagates above f_c = c k_c / (2π √(ε_r μ_r)); its propagation constant is
β = √(k0² ε_r μ_r − k_c²). The wave admittances (times ωμ0, as the termination uses them):
y = β/μ_r for TE and TEM, y = k0² ε_r/β for TM (Pozar, §3.1: Z_TE = ωμ/β, Z_TM = β/(ωε)).

Left for later: anisotropic and lossy fillings behind a port (refused at the wall's key).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg
from scipy.constants import c as C0

from ..errors import InputError
from ..fem.coefficients import is_tensor
from ..fem.space import EdgeSpace

# Face vertices farther than this share of the face's size from its plane make it non-planar.
PLANAR_TOLERANCE = 1e-6
# Eigenvalues of the 2D problem below this share of the largest are surface gradients.
KERNEL_SHARE = 1e-9
# More modes than terminated are found, to warn about shorted modes that propagate.
EXTRA_MODES = 3
# Of the face-mass-normalised kernel, a direction that keeps less than this share of its
# norm once the surface gradients are removed is round-off, not a harmonic (TEM) field.
HARMONIC_SHARE = 1e-6
TE, TM, TEM = "TE", "TM", "TEM"


@dataclass(frozen=True)
class PortModes:
    name: str
    facets: np.ndarray          # boundary facet indices of the scikit-fem mesh
    normal: np.ndarray          # outward unit normal (3,)
    eps_r: float
    mu_r: float
    face_dofs: np.ndarray       # full edge-space DOFs of the face's free trace
    face_mass: np.ndarray       # ∫ e·v dS over those DOFs (dense)
    cutoff_k_squared: np.ndarray    # k_c² (1/m²), ascending, one per mode found
    patterns: np.ndarray        # (len(face_dofs), modes): face-mass-normalised traces
    kinds: tuple[str, ...]      # TE, TM or TEM per mode (HYBRID on a layered face)
    terminated: int             # how many of the lowest are terminated
    hybrid: "HybridTangents | None" = None    # a layered face's modes at one frequency

    def cutoff_hz(self) -> np.ndarray:
        """Cut-off frequencies (Hz); NaN for the hybrid modes of a layered face, whose
        pattern changes with frequency."""
        return C0 * np.sqrt(self.cutoff_k_squared) / (2 * math.pi * math.sqrt(self.eps_r
                                                                               * self.mu_r))

    def propagates(self, k0_squared: float, mode: int) -> bool:
        if self.hybrid is not None:
            return bool(self.hybrid.beta_squared[mode].real > 0)
        return bool(self.cutoff_k_squared[mode] < k0_squared * self.eps_r * self.mu_r)

    def propagation_constant(self, k0_squared: complex, mode: int) -> complex:
        if self.hybrid is not None:
            return self.hybrid.beta(k0_squared, mode)
        return propagation_constant(k0_squared * self.eps_r * self.mu_r,
                                    self.cutoff_k_squared[mode])

    def admittance(self, k0_squared: complex, mode: int) -> tuple[complex, complex]:
        """(y, dy/dλ) at λ = k0²: the mode's wave admittance times ωμ0, y = ωμ0 Y.
        TE and TEM: Y = β/(ωμ0 μ_r), y = β/μ_r; TM: Y = ωε0 ε_r/β, y = k0² ε_r/β (Pozar,
        Microwave Engineering, 4th ed., §3.1). dβ/dλ = ε_r μ_r/(2β)."""
        if self.hybrid is not None:
            return self.hybrid.admittance(k0_squared, mode)
        beta = self.propagation_constant(k0_squared, mode)
        slope = self.eps_r * self.mu_r / (2 * beta)
        if self.kinds[mode] == TM:
            return (k0_squared * self.eps_r / beta,
                    self.eps_r / beta - k0_squared * self.eps_r * slope / beta**2)
        return beta / self.mu_r, slope / self.mu_r

    def label(self, mode: int) -> str:
        """"TE 2", "TM 1", "TEM 1": the kind and the mode's number among the face's modes."""
        return f"{self.kinds[mode]} {mode + 1}"


@dataclass(frozen=True)
class HybridTangents:
    """A layered face's modes solved at one real λ_r = k0² (ports.layered_face): β² and
    y = ωμ0 Y per mode there, and their slopes in λ. Away from λ_r, β² and y follow their
    tangents (the complex frequency of a loaded mode lies within about 1/Q of λ_r)."""
    reference: float                # λ_r (1/m²)
    beta_squared: np.ndarray        # β² at λ_r per mode
    beta_squared_slope: np.ndarray  # dβ²/dλ
    y: np.ndarray                   # ωμ0 Y at λ_r per mode
    y_slope: np.ndarray             # dy/dλ

    def beta(self, k0_squared: complex, mode: int) -> complex:
        return propagation_constant(self.beta_squared[mode] + self.beta_squared_slope[mode]
                                    * (k0_squared - self.reference), 0.0)

    def admittance(self, k0_squared: complex, mode: int) -> tuple[complex, complex]:
        return (complex(self.y[mode] + self.y_slope[mode] * (k0_squared - self.reference)),
                complex(self.y_slope[mode]))


def propagation_constant(k_squared: complex, cutoff_k_squared: float) -> complex:
    """β = √(k² − k_c²) (1/m) on the branch that continues the real axis: β > 0 above
    cut-off, β = −jα below it (e^{−jβz} then decays away from the port). Near the real axis
    the cut between the two lies at the cut-off, where no resonance is terminated anyway."""
    z = complex(k_squared) - cutoff_k_squared
    return np.sqrt(z) if z.real >= 0 else -1j * np.sqrt(-z)


def port_facets(space: EdgeSpace, name: str) -> np.ndarray:
    """The facets of wall ``name``; InputError when none lies on the outside (an inner face
    between regions is no port)."""
    facets = np.array(sorted(f for f, wall in space.facet_wall.items() if wall == name),
                      dtype=np.int64)
    if facets.size == 0:
        raise InputError("a port must be a face on the outside of the part; no boundary "
                         "face carries this name (is it an inner face between regions?)",
                         field=f"walls.{name}")
    return facets


def port_normal(space: EdgeSpace, name: str, facets: np.ndarray) -> np.ndarray:
    """The outward unit normal of a planar face; InputError when it is not planar."""
    mesh = space.mesh
    corners = mesh.p[:, mesh.facets[:, facets]]            # (3, 3 corners, n)
    normals = np.cross(corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0], axis=0)
    # orient each facet's normal away from its element before summing
    elements = mesh.f2t[0, facets]
    centre = mesh.p[:, mesh.t[:, elements]].mean(axis=1)
    sign = np.sign(np.sum(normals * (corners.mean(axis=1) - centre), axis=0))
    area_normal = (normals * sign).sum(axis=1)
    normal = area_normal / np.linalg.norm(area_normal)
    points = corners.reshape(3, -1)
    size = np.ptp(points, axis=1).max()
    offset = normal @ (points - points.mean(axis=1, keepdims=True))
    if np.max(np.abs(offset)) > PLANAR_TOLERANCE * size:
        raise InputError(f"a port face must be planar; this one leaves its mean plane by "
                         f"{np.max(np.abs(offset)) * 1e3:.3g} mm", field=f"walls.{name}")
    return normal


def facet_filling(space: EdgeSpace, name: str, facets: np.ndarray):
    """(ε_r, 1/μ_r) of the element behind each facet; InputError for an anisotropic, lossy
    or graded filling."""
    elements = space.mesh.f2t[0, facets]
    eps, inverse_mu = space.mass_coef[elements], space.stiffness_coef[elements]
    if is_tensor(eps) or is_tensor(inverse_mu) or np.iscomplexobj(eps):
        raise InputError("a port needs a lossless isotropic filling behind it (anisotropic "
                         "or lossy guides are not terminated yet)", field=f"walls.{name}")
    eps, inverse_mu = eps.reshape(len(elements), -1), inverse_mu.reshape(len(elements), -1)
    if (np.ptp(eps, axis=1).max() > 1e-9 * eps.max()
            or np.ptp(inverse_mu, axis=1).max() > 1e-9 * inverse_mu.max()):
        raise InputError("the guide behind a port must be filled piecewise with uniform "
                         "materials (a graded filling is not terminated)",
                         field=f"walls.{name}")
    return eps[:, 0], inverse_mu[:, 0]


def is_layered(eps: np.ndarray, inverse_mu: np.ndarray) -> bool:
    return bool(np.ptp(eps) > 1e-9 * np.max(eps)
                or np.ptp(inverse_mu) > 1e-9 * np.max(inverse_mu))


def _face_basis(space: EdgeSpace, element, facets: np.ndarray):
    from skfem import FacetBasis

    return FacetBasis(space.mesh, element, facets=facets, intorder=2 * space.order)


def _gather(local: np.ndarray, local_index: np.ndarray, n: int) -> np.ndarray:
    """Sum per-facet matrices (nf, nb, nb) into a dense (n, n) one; local_index (nf, nb) gives
    each local function's place, −1 for a function left out (off the face, or fixed)."""
    out = np.zeros((n, n))
    for f in range(local_index.shape[0]):
        index = local_index[f]
        inside = index >= 0
        out[np.ix_(index[inside], index[inside])] += local[f][np.ix_(inside, inside)]
    return out


def _places(dofs: np.ndarray, n_full: int, element_dofs: np.ndarray) -> np.ndarray:
    where = np.full(n_full, -1)
    where[dofs] = np.arange(dofs.size)
    return where[element_dofs.T]


def _face_matrices(space: EdgeSpace, facets: np.ndarray, normal: np.ndarray,
                   mass_weight=None, curl_weight=None):
    """The face's free trace DOFs and the 2D curl-curl and mass matrices over them, each
    optionally weighted by a value per facet (1/μ_r, ε_r of a layered face)."""
    basis = _face_basis(space, space.element, facets)
    values = np.stack([np.asarray(b[0]) for b in basis.basis])          # (nb, 3, nf, nq)
    curls = np.stack([b[0].curl for b in basis.basis])
    tangential = values - np.einsum("bifq,i->bfq", values, normal)[:, None] * normal[
        None, :, None, None]
    surface_curl = np.einsum("bifq,i->bfq", curls, normal)
    dx = basis.dx
    kept = np.zeros(space.dofs.N, dtype=bool)
    kept[space.constraint.kept] = True
    on_face = np.unique(space.dofs.get_facet_dofs(facets).all())
    face_dofs = on_face[kept[on_face]]
    local_index = _places(face_dofs, space.dofs.N, basis.element_dofs)
    mass = _gather(np.einsum("aifq,bifq,fq->fab", tangential, tangential,
                             _weighted(dx, mass_weight)), local_index, face_dofs.size)
    stiffness = _gather(np.einsum("afq,bfq,fq->fab", surface_curl, surface_curl,
                                  _weighted(dx, curl_weight)), local_index, face_dofs.size)
    return face_dofs, mass, stiffness


def _weighted(dx: np.ndarray, weight) -> np.ndarray:
    return dx if weight is None else dx * np.asarray(weight)[:, None]


def _face_gradient(space: EdgeSpace, facets: np.ndarray, face_dofs: np.ndarray,
                   mass_weight=None):
    """(B, scalar mass): B maps the free scalar (Lagrange) DOFs of the face to the trace DOFs
    of their surface gradients, exactly (∇P_k ⊂ NED_k, and a trace DOF of a gradient depends
    on the potential's trace alone); the mass is ∫ φ ψ dS over the same scalar DOFs."""
    from ..fem.gradient import discrete_gradient

    kept = np.zeros(space.scalar_dofs.N, dtype=bool)
    kept[space.scalar_constraint.kept] = True
    on_face = np.unique(space.scalar_dofs.get_facet_dofs(facets).all())
    scalars = on_face[kept[on_face]]
    gradient = discrete_gradient(space)[face_dofs][:, scalars].toarray()
    basis = _face_basis(space, space.scalar_element, facets)
    values = np.stack([np.asarray(b[0]) for b in basis.basis])          # (nb, nf, nq)
    mass = _gather(np.einsum("afq,bfq,fq->fab", values, values,
                             _weighted(basis.dx, mass_weight)),
                   _places(scalars, space.scalar_dofs.N, basis.element_dofs), scalars.size)
    return gradient, mass


def _mass_normalised(vectors: np.ndarray, mass: np.ndarray) -> np.ndarray:
    return vectors / np.sqrt(np.einsum("ij,ik,kj->j", vectors, mass, vectors))


def _tm_modes(gradient, scalar_mass, face_mass):
    """TM cut-offs k_c² and transverse patterns ∇_t E_z (face-mass normalised):
    −∇_t² E_z = k_c² E_z, E_z = 0 on the rim, in the Lagrange space of the face; its
    stiffness ∫ ∇φ·∇ψ is Bᵀ M_face B, exact since B φ is the surface gradient itself."""
    if gradient.shape[1] == 0:
        return np.zeros(0), np.zeros((gradient.shape[0], 0))
    stiffness = gradient.T @ face_mass @ gradient
    values, potentials = scipy.linalg.eigh(stiffness, scalar_mass)
    physical = values > KERNEL_SHARE * max(values.max(), 1.0)
    return values[physical], _mass_normalised(gradient @ potentials[:, physical], face_mass)


def _tem_patterns(kernel, gradient, face_mass):
    """The harmonic part of the kernel: curl-free traces M-orthogonal to every surface
    gradient of a potential that vanishes on the rim. On a face with one rim there is none;
    on a face with r separate rims (a coaxial line: r = 2) there are r − 1, the transverse
    fields of the TEM modes, −∇_t V of the potentials that are constant on each conductor."""
    if kernel.shape[1] == 0:
        return kernel
    if gradient.shape[1]:
        mg = face_mass @ gradient
        kernel = kernel - gradient @ np.linalg.lstsq(gradient.T @ mg, mg.T @ kernel,
                                                     rcond=None)[0]
    # the harmonic fields are what is left of the (M-orthonormal) kernel: a basis of rank
    # dim(kernel) − rank(B); the rest is round-off
    gram = kernel.T @ face_mass @ kernel
    weights, directions = np.linalg.eigh(gram)
    keep = weights > HARMONIC_SHARE
    return _mass_normalised(kernel @ directions[:, keep], face_mass)


def port_modes(space: EdgeSpace, name: str, terminated: int) -> PortModes:
    """The port ``name`` of ``space`` (E form) with its lowest modes (TEM, TE, TM by cut-off)."""
    facets = port_facets(space, name)
    normal = port_normal(space, name, facets)
    eps, inverse_mu = facet_filling(space, name, facets)
    if is_layered(eps, inverse_mu):
        raise InputError("a layered port face has hybrid modes (ports.layered_face)",
                         field=f"walls.{name}")
    eps_r, mu_r = float(eps[0]), float(1.0 / inverse_mu[0])
    face_dofs, mass, stiffness = _face_matrices(space, facets, normal)
    values, vectors = scipy.linalg.eigh(stiffness, mass)
    physical = values > KERNEL_SHARE * max(values.max(), 1.0)
    gradient, scalar_mass = _face_gradient(space, facets, face_dofs)
    tm_values, tm_patterns = _tm_modes(gradient, scalar_mass, mass)
    tem_patterns = _tem_patterns(vectors[:, ~physical], gradient, mass)
    cutoffs = np.concatenate([np.zeros(tem_patterns.shape[1]), values[physical], tm_values])
    kinds = ([TEM] * tem_patterns.shape[1] + [TE] * int(physical.sum())
             + [TM] * tm_values.size)
    patterns = np.hstack([tem_patterns, vectors[:, physical], tm_patterns])
    order = np.argsort(cutoffs, kind="stable")[:terminated + EXTRA_MODES]
    if cutoffs.size < terminated:
        raise InputError(f"the port's mesh carries only {cutoffs.size} modes, fewer than "
                         f"port_modes = {terminated}; refine the mesh",
                         field=f"walls.{name}.port_modes")
    return PortModes(name=name, facets=facets, normal=normal, eps_r=eps_r, mu_r=mu_r,
                     face_dofs=face_dofs, face_mass=mass, cutoff_k_squared=cutoffs[order],
                     patterns=patterns[:, order], kinds=tuple(kinds[i] for i in order),
                     terminated=terminated)
