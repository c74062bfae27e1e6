"""A port's face and the TE modes of the waveguide whose cross-section it is.

The face must be planar (one plane through every facet, one outward normal n) and on the
outside of the part (boundary facets of the mesh); the filling behind it must be one
isotropic material (ε_r, μ_r), since a layered or anisotropic filling has hybrid modes.

TE modes of a homogeneous guide of any shape. On the face, the tangential trace e of the 3D
Nédélec space is a 2D edge-element field, and the surface curl n·∇×e depends on that trace
alone. The 2D eigenproblem

    ∫ (n·∇×e)(n·∇×v) dS = k_c² ∫ e·v dS     for all traces v, with e×n = 0 on the rim

(the rim's edges lie on the PEC walls around the port) is the transverse-field form of the
guide's modes: its non-zero eigenvalues are the TE cut-off wavenumbers k_c² (the Neumann
problem ∇_t²ψ + k_c²ψ = 0, ∂ψ/∂ν = 0, with e_t = ∇_tψ × n, in mixed form), and its zero
eigenvalues are the surface gradients, where the TM modes' transverse fields live (∇_t E_z).
Solving it on the traces themselves (rather than with a separate 2D mesh) gives mode
patterns that lie exactly in the space the 3D field's trace lives in, so the termination
(ports.termination) couples them without projection error, and the cut-offs converge like
the 3D eigenvalues. A mode propagates above f_c = c k_c / (2π √(ε_r μ_r)); its propagation
constant is β = √(k0² ε_r μ_r − k_c²) (D. M. Pozar, Microwave Engineering, 4th ed., §3.1).

Left for later: TM modes (they need E_z, not in the trace), layered and anisotropic
fillings (hybrid modes: a 2D problem with both transverse and axial unknowns) and coaxial
TEM modes (the kernel's harmonic part on a face with two rims).
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
# More TE modes than terminated are found, to warn about shorted modes that propagate.
EXTRA_MODES = 3


@dataclass(frozen=True)
class PortModes:
    name: str
    facets: np.ndarray          # boundary facet indices of the scikit-fem mesh
    normal: np.ndarray          # outward unit normal (3,)
    eps_r: float
    mu_r: float
    face_dofs: np.ndarray       # full edge-space DOFs of the face's free trace
    face_mass: np.ndarray       # ∫ e·v dS over those DOFs (dense)
    cutoff_k_squared: np.ndarray    # k_c² (1/m²), ascending, one per TE mode found
    patterns: np.ndarray        # (len(face_dofs), modes): face-mass-normalised traces
    terminated: int             # how many of the lowest are terminated

    def cutoff_hz(self) -> np.ndarray:
        return C0 * np.sqrt(self.cutoff_k_squared) / (2 * math.pi * math.sqrt(self.eps_r
                                                                               * self.mu_r))

    def propagation_constant(self, k0_squared: complex, mode: int) -> complex:
        return propagation_constant(k0_squared * self.eps_r * self.mu_r,
                                    self.cutoff_k_squared[mode])


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


def _plane(space: EdgeSpace, name: str, facets: np.ndarray) -> np.ndarray:
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


def _filling(space: EdgeSpace, name: str, facets: np.ndarray) -> tuple[float, float]:
    """(ε_r, μ_r) of the one isotropic material behind the face."""
    elements = space.mesh.f2t[0, facets]
    eps, inverse_mu = space.mass_coef[elements], space.stiffness_coef[elements]
    if is_tensor(eps) or is_tensor(inverse_mu) or np.iscomplexobj(eps):
        raise InputError("a port needs a lossless isotropic filling behind it (anisotropic "
                         "or lossy guides are not terminated yet)", field=f"walls.{name}")
    if np.ptp(eps) > 1e-9 * np.max(eps) or np.ptp(inverse_mu) > 1e-9 * np.max(inverse_mu):
        raise InputError("the guide behind a port must be filled with one material (layered "
                         "fillings are not terminated yet)", field=f"walls.{name}")
    return float(eps.flat[0]), float(1.0 / inverse_mu.flat[0])


def _face_matrices(space: EdgeSpace, facets: np.ndarray, normal: np.ndarray):
    """The face's free trace DOFs and the 2D curl-curl and mass matrices over them."""
    from skfem import FacetBasis

    basis = FacetBasis(space.mesh, space.element, facets=facets,
                       intorder=2 * space.order)
    values = np.stack([b[0].value for b in basis.basis])          # (nb, 3, nf, nq)
    curls = np.stack([b[0].curl for b in basis.basis])
    tangential = values - np.einsum("bifq,i->bfq", values, normal)[:, None] * normal[
        None, :, None, None]
    surface_curl = np.einsum("bifq,i->bfq", curls, normal)
    dx = basis.dx
    local_mass = np.einsum("aifq,bifq,fq->fab", tangential, tangential, dx)
    local_stiffness = np.einsum("afq,bfq,fq->fab", surface_curl, surface_curl, dx)
    kept = np.zeros(space.dofs.N, dtype=bool)
    kept[space.constraint.kept] = True
    on_face = np.unique(space.dofs.get_facet_dofs(facets).all())
    face_dofs = on_face[kept[on_face]]
    where = np.full(space.dofs.N, -1)
    where[face_dofs] = np.arange(face_dofs.size)
    local_index = where[basis.element_dofs.T]                       # (nf, nb)
    n = face_dofs.size
    mass, stiffness = np.zeros((n, n)), np.zeros((n, n))
    for f in range(local_index.shape[0]):
        index = local_index[f]
        inside = index >= 0
        block = np.ix_(index[inside], index[inside])
        mass[block] += local_mass[f][np.ix_(inside, inside)]
        stiffness[block] += local_stiffness[f][np.ix_(inside, inside)]
    return face_dofs, mass, stiffness


def port_modes(space: EdgeSpace, name: str, terminated: int) -> PortModes:
    """The port ``name`` of ``space`` (E form) with its lowest TE modes."""
    facets = port_facets(space, name)
    normal = _plane(space, name, facets)
    eps_r, mu_r = _filling(space, name, facets)
    face_dofs, mass, stiffness = _face_matrices(space, facets, normal)
    values, vectors = scipy.linalg.eigh(stiffness, mass)
    physical = values > KERNEL_SHARE * max(values.max(), 1.0)
    values, vectors = values[physical], vectors[:, physical]
    wanted = terminated + EXTRA_MODES
    if values.size < terminated:
        raise InputError(f"the port's mesh carries only {values.size} TE modes, fewer than "
                         f"port_modes = {terminated}; refine the mesh",
                         field=f"walls.{name}.port_modes")
    return PortModes(name=name, facets=facets, normal=normal, eps_r=eps_r, mu_r=mu_r,
                     face_dofs=face_dofs, face_mass=mass,
                     cutoff_k_squared=values[:wanted], patterns=vectors[:, :wanted],
                     terminated=terminated)
