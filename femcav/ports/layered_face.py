"""The hybrid modes of a port face with a layered filling (regions of different ε_r, μ_r
behind it): β² at a given frequency from the transverse-edge and axial-nodal formulation.

A mode of the guide is E = (e_t + n e_z) e^{−jβz}, z along the face's outward normal n. With
∇ = ∇_t − jβ n, the transverse curl of E is (∇_t e_z + jβ e_t) × n. Put e_z = jβ u and test
with (f_t, f_z = −jβ v) on the wave e^{+jβz}: the β-odd terms cancel and

    ∫ μ_r⁻¹ (n·∇×e_t)(n·∇×f_t) − k0² ε_r e_t·f_t dS
        = −β² ∫ μ_r⁻¹ (e_t + ∇_t u)·(f_t + ∇_t v) − k0² ε_r u v dS,

for all f_t (edge traces, e_t×n = 0 on the rim) and v (Lagrange traces, u = v = 0 on the
rim): a linear pencil in β² at fixed k0, free of spurious modes (J.-F. Lee, D.-K. Sun and
Z. J. Cendes, "Full-wave analysis of dielectric waveguides using tangential vector finite
elements", IEEE Trans. MTT 39(8), 1991). e_t lives in the trace of the 3D edge space and u
in the trace of the 3D Lagrange space, and ∇_t u is mapped exactly into the edge trace by the
discrete gradient B (ports.cross_section), so the right side is
[[M_μ, M_μ B], [Bᵀ M_μ, Bᵀ M_μ B − k0² T_ε]] with M_μ = ∫ μ_r⁻¹ e·f, T_ε = ∫ ε_r u v. u is
eliminated (its block is invertible for k0 ≠ 0): (S − k0² T) e = θ C e, θ = −β²,
C = M_μ − M_μ B Z⁻¹ Bᵀ M_μ, Z = Bᵀ M_μ B − k0² T_ε, u = −Z⁻¹ Bᵀ M_μ e.

Wave admittance: the transverse H of the mode is −(∇_t e_z + jβ e_t) × n / (jωμ0 μ_r), so
y = ωμ0 ∫ (e_t × h_t)·n dS = β ∫ μ_r⁻¹ e_t·(e_t + ∇_t u) dS (TE: β/μ_r, TM: k0² ε_r/β for a
homogeneous face with ∫ e_t·e_t = 1). Distinct modes are orthogonal in ∫ (e_m × h_k)·n dS,
so on the span of the terminated patterns the port term is Σ_m j y_m c_m(E) c_m(v) with c_m
the pattern coefficients (ports.termination), as for a homogeneous face.

The pattern of a hybrid mode changes with frequency. The loaded solve (ports.loaded_solve)
solves the face again at the real part of each iterate's λ = k0² and terminates the part
with those (real) patterns; β² and y are extended to the complex λ by their tangents in λ
(slopes by a second face solve at λ(1 + SLOPE_STEP)). At the converged λ the patterns are
those of Re λ and the admittance is exact to second order in Im λ, i.e. to about (1/2Q)².
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg

from ..fem.space import EdgeSpace
from .cross_section import (EXTRA_MODES, HybridTangents, PortModes, _face_gradient,
                            _face_matrices, _mass_normalised, facet_filling, port_facets,
                            port_normal)

HYBRID = "hybrid"
# relative step of λ for the slopes of β² and y
SLOPE_STEP = 1e-6
# β² ≤ k0² max(ε_r μ_r) for a guided mode of a lossless guide; the shift lies this much below
BOUND_MARGIN = 1.1


@dataclass(frozen=True)
class LayeredFace:
    name: str
    facets: np.ndarray
    normal: np.ndarray
    face_dofs: np.ndarray       # free edge-trace DOFs of the face
    face_mass: np.ndarray       # ∫ e·f dS (patterns are normalised with it)
    curl: np.ndarray            # S = ∫ μ_r⁻¹ (n·∇×e)(n·∇×f) dS
    eps_mass: np.ndarray        # T = ∫ ε_r e·f dS
    inverse_mu_mass: np.ndarray     # M_μ = ∫ μ_r⁻¹ e·f dS
    gradient: np.ndarray        # B: free face Lagrange DOFs -> edge traces of their gradients
    scalar_eps_mass: np.ndarray     # T_ε = ∫ ε_r u v dS
    largest_index: float        # max ε_r μ_r over the face
    terminated: int

    def modes_at(self, k0_squared: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(β², e_t patterns, u) of the face's modes at k0², the largest β² first."""
        return hybrid_modes(self, k0_squared, self.terminated + EXTRA_MODES)

    def port_at(self, k0_squared: float) -> PortModes:
        """The face as a PortModes, its modes solved at the real ``k0_squared``."""
        reference = float(np.real(k0_squared))
        beta_squared, patterns, potentials = self.modes_at(reference)
        y = self._admittances(reference, beta_squared, patterns, potentials)
        step = SLOPE_STEP * reference
        beta_squared_2, patterns_2, potentials_2 = self.modes_at(reference + step)
        y_2 = self._admittances(reference + step, beta_squared_2, patterns_2, potentials_2)
        tangents = HybridTangents(reference=reference, beta_squared=beta_squared,
                                  beta_squared_slope=(beta_squared_2 - beta_squared) / step,
                                  y=y, y_slope=(y_2 - y) / step)
        count = beta_squared.size
        return PortModes(name=self.name, facets=self.facets, normal=self.normal,
                         eps_r=float("nan"), mu_r=float("nan"), face_dofs=self.face_dofs,
                         face_mass=self.face_mass, cutoff_k_squared=np.full(count, np.nan),
                         patterns=patterns, kinds=(HYBRID,) * count,
                         terminated=self.terminated, hybrid=tangents)

    def _admittances(self, k0_squared, beta_squared, patterns, potentials) -> np.ndarray:
        from .cross_section import propagation_constant

        betas = np.array([propagation_constant(b, 0.0) for b in beta_squared])
        full = patterns + self.gradient @ potentials
        return betas * np.einsum("im,ij,jm->m", patterns, self.inverse_mu_mass, full)


def layered_face(space: EdgeSpace, name: str, terminated: int) -> LayeredFace:
    """The matrices of the layered port face ``name``."""
    facets = port_facets(space, name)
    normal = port_normal(space, name, facets)
    eps, inverse_mu = facet_filling(space, name, facets)
    face_dofs, mass, _ = _face_matrices(space, facets, normal)
    _, eps_mass, curl = _face_matrices(space, facets, normal, mass_weight=eps,
                                       curl_weight=inverse_mu)
    _, inverse_mu_mass, _ = _face_matrices(space, facets, normal, mass_weight=inverse_mu)
    gradient, scalar_eps_mass = _face_gradient(space, facets, face_dofs, mass_weight=eps)
    return LayeredFace(name=name, facets=facets, normal=normal, face_dofs=face_dofs,
                       face_mass=mass, curl=curl, eps_mass=eps_mass,
                       inverse_mu_mass=inverse_mu_mass, gradient=gradient,
                       scalar_eps_mass=scalar_eps_mass,
                       largest_index=float(np.max(eps / inverse_mu)), terminated=terminated)


def hybrid_modes(face: LayeredFace, k0_squared: float, count: int):
    """(β², patterns, potentials u) of the ``count`` modes with the largest Re β² at k0²:
    the pencil of the module's docstring with u eliminated. Patterns are real and
    face-mass normalised (a real k0² gives a real symmetric pencil)."""
    B, Mu = face.gradient, face.inverse_mu_mass
    MuB = Mu @ B
    Z = B.T @ MuB - k0_squared * face.scalar_eps_mass
    eliminate = np.linalg.solve(Z, MuB.T) if B.shape[1] else np.zeros((0, Mu.shape[0]))
    C = Mu - MuB @ eliminate
    theta, vectors = _lowest(face.curl - k0_squared * face.eps_mass, C,
                             -BOUND_MARGIN * k0_squared * face.largest_index, count)
    order = np.argsort(theta.real)
    vectors = vectors[:, order].real
    patterns = _mass_normalised(vectors, face.face_mass)
    return -theta[order].real, patterns, -eliminate @ patterns


def _lowest(A: np.ndarray, C: np.ndarray, below: float, count: int):
    """The ``count`` eigenvalues θ of A x = θ C x nearest ``below`` (a bound under all of
    them) and their vectors: Arnoldi on (A − σC)⁻¹ C, one dense LU. Neither matrix is
    definite, and a dense QZ of the whole pencil costs seconds at a few hundred DOFs."""
    from scipy.sparse.linalg import LinearOperator, eigs

    n = A.shape[0]
    count = min(count, n - 2)
    lu = scipy.linalg.lu_factor(A - below * C)
    operator = LinearOperator((n, n), matvec=lambda x: scipy.linalg.lu_solve(lu, C @ x),
                              dtype=float)
    nu, vectors = eigs(operator, k=count, which="LM", tol=1e-12,
                       v0=np.ones(n))                        # reproducible
    return below + 1.0 / nu.real, vectors
