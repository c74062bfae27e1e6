"""The boundary operator of a waveguide port in the E form: each terminated mode (TE, TM or
TEM) adds a rank-one term to the pencil; the port's other modes see a short.

Derivation. The E form ∇×(μ_r⁻¹ ∇×E) = k0² ε_r E, tested with v and integrated by parts
(∫ v·∇×A = ∫ A·∇×v + ∮ (n×A)·v), gives with μ_r⁻¹ ∇×E = −jωμ0 H (time e^{jωt}):

    ∫ μ_r⁻¹ ∇×E·∇×v − k0² ∫ ε_r E·v − jωμ0 ∮ (n×H)·v dS = 0.

On a PEC wall v×n = 0 and the face term vanishes; on a port it is what the guide beyond the
face imposes. Expand the tangential field on the face in the guide's modes, E_t = Σ_m a_m e_m
with ∫ e_m·e_l dS = δ_ml. A mode that leaves the part through the face (along the outward
normal n) carries H_t = Y_m n×E_t with its wave admittance Y_m (D. M. Pozar, Microwave
Engineering, 4th ed., §3.1: TE and TEM Y = β/(ωμ0 μ_r), TM Y = ωε0 ε_r/β), so
n×H_t = Y_m n×(n×E_t) = −Y_m a_m e_m, and the face term becomes

    −jωμ0 ∮ (n×H)·v dS = Σ_m j y_m a_m(E) a_m(v),    a_m(u) = ∫ u·e_m dS,  y_m = ωμ0 Y_m:

one rank-one term w_m w_mᵀ per mode, scaled by j y_m(λ) (y = β/μ_r for TE and TEM,
y = λ ε_r/β for TM), where w_m holds the mode's projections of the basis functions. The
pencil is T(λ) = K + Σ_m j y_m(λ) w_m w_mᵀ − λM, λ = k0², complex symmetric, and non-linear in
λ through β_m = √(λ ε_r μ_r − k_c,m²) (ports.loaded_solve). Above cut-off y_m > 0 and the
term takes energy out (Im λ > 0: the mode decays in time as e^{−Im ω t}); below cut-off
β_m = −jα_m and it is a real reactance (inductive for TE, capacitive for TM).

The other modes of the face: the face's trace is restricted to the span of the terminated
modes (the other DOFs of the face are dropped), so every other mode sees a short (E_t = 0
in it). In the constraint x_full = P x, the face's DOFs are replaced by one DOF per
terminated mode: P's columns for those are the modes' patterns recombined (T A, A = T_R⁻¹
for pivot rows R chosen by a pivoted QR) so that each such DOF is the field's value on one
face DOF, as the constraint layer expects (fem.constraints). The scalar potentials of the
kernel basis are held at zero on the face. A terminated TM or TEM mode's pattern is itself a
surface gradient, so a 3D gradient with that trace lies in the space outside the kernel
basis; the port term is not zero on it, so it is no static mode of the loaded pencil but a
root at λ = 0 (y_TM and y_TEM vanish there), which the solve drops (ports.loaded_solve).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np
import scipy.linalg
import scipy.sparse as sp

from ..fem.constraints import Constraint
from ..fem.space import EdgeSpace
from .cross_section import PortModes


@dataclass(frozen=True)
class TerminatedMode:
    port: str
    mode: int                   # 0-based mode number of its port (all kinds by cut-off)
    weights: sp.csr_matrix      # w_m over the reduced DOFs, (n, 1)

    def matrix(self) -> sp.csr_matrix:
        return (self.weights @ self.weights.T).tocsr()


@dataclass(frozen=True)
class PortTermination:
    space: EdgeSpace            # the space with the port faces restricted
    ports: tuple[PortModes, ...]
    modes: tuple[TerminatedMode, ...]


def terminate(space: EdgeSpace, ports: list[PortModes]) -> PortTermination:
    """``space`` with every port face restricted to its terminated modes, and the w_m."""
    constraint = space.constraint
    dropped = np.concatenate([p.face_dofs for p in ports])
    kept_full = np.setdiff1d(constraint.kept, dropped)
    pivots, columns = [], []
    for port in ports:
        patterns = port.patterns[:, :port.terminated]
        _, _, order = scipy.linalg.qr(patterns.T, pivoting=True, mode="economic")
        rows = order[:port.terminated]
        combine = np.linalg.inv(patterns[rows])          # A: T A is the identity on rows
        pivots.append(port.face_dofs[rows])
        columns.append((port, rows, patterns @ combine, combine))
    kept = np.union1d(kept_full, np.concatenate(pivots))
    index = np.full(constraint.n_full, -1)
    index[kept] = np.arange(kept.size)
    link_rows, link_cols, link_vals, terminated = [], [], [], []
    for port, rows, recombined, combine in columns:
        others = np.setdiff1d(np.arange(port.face_dofs.size), rows)
        for j, row in enumerate(rows):
            link_rows.append(port.face_dofs[others])
            link_cols.append(np.full(others.size, index[port.face_dofs[row]]))
            link_vals.append(recombined[others, j])
        # a_m(T A x_R) = e_mᵀ M_face T A x_R = (A x_R)_m: w_m is row m of A on the pivots
        for m in range(port.terminated):
            weights = sp.csr_matrix((combine[m], (index[port.face_dofs[rows]],
                                                  np.zeros(rows.size, dtype=int))),
                                    shape=(kept.size, 1))
            terminated.append(TerminatedMode(port.name, m, weights))
    links = sp.csr_matrix((np.concatenate(link_vals),
                           (np.concatenate(link_rows), np.concatenate(link_cols))),
                          shape=(constraint.n_full, kept.size))
    scalar = space.scalar_constraint
    face_scalars = np.concatenate([space.scalar_dofs.get_facet_dofs(p.facets).all()
                                   for p in ports])
    restricted = replace(
        space, constraint=Constraint(constraint.n_full, kept, links),
        scalar_constraint=Constraint.keeping(scalar.n_full,
                                             np.setdiff1d(scalar.kept, face_scalars)))
    return PortTermination(space=restricted, ports=tuple(ports), modes=tuple(terminated))
