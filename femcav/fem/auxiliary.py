"""The nodal auxiliary space of the 3D edge space, as the eigen layer's preconditioner needs it.

femcav.eigen.hx builds the Hiptmair-Xu preconditioner from matrices alone; this module turns
an EdgeSpace into those matrices: Π restricted to the free DOFs (femcav.fem.interpolation),
the coordinates of the vertices it keeps, and optionally the vector Laplacian that can replace
the Galerkin nodal problem.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from ..eigen.problem import AuxiliarySpace
from ..walls import essential_kinds
from .coefficients import isotropic_part
from .interpolation import nodal_vector_interpolation

NODAL_PROBLEMS = ("galerkin", "laplacian")


def auxiliary_space(space, shift: float, *, nodal: str = "galerkin",
                    wall_vertices: str | None = None) -> AuxiliarySpace:
    """Π, its vertices and (``nodal`` = "laplacian") the coefficient-weighted vector
    Laplacian of K + ``shift``·M for ``space``; "galerkin" leaves the nodal problem to be
    Πᵀ A Π.

    ``wall_vertices`` = "drop" (the default at order 1) keeps in Π only the vertices off the
    essential walls, so that the auxiliary space is the nodal fields vanishing there, as in
    Hiptmair and Xu's analysis of H_0(curl). "keep" (the default at orders 2 and 3) keeps
    every vertex: restricted to the free rows, a wall vertex still carries the normal
    component of the field there (nonzero for E on a PEC wall). Measured on a box: at order 1
    CG to 1e-8 took 12 / 15 iterations at 4.1k / 34k DOFs keeping them, 10 / 10 dropping them;
    at order 2 (3.2k DOFs) LOBPCG took 25 iterations keeping them and 47 dropping them, at
    order 3 (3.4k DOFs) 137 against 507. A column that is zero on the free rows (a corner
    vertex whose edges all lie on walls) is decoupled in Πᵀ A Π by a unit diagonal.
    """
    if not shift > 0:
        raise ValueError(f"the shift τ of K + τM must be positive, got {shift!r}")
    if nodal not in NODAL_PROBLEMS:
        raise ValueError(f"nodal must be 'laplacian' or 'galerkin', got {nodal!r}")
    if wall_vertices is None:
        wall_vertices = "drop" if space.order == 1 else "keep"
    if wall_vertices not in ("drop", "keep"):
        raise ValueError(f"wall_vertices must be 'drop' or 'keep', got {wall_vertices!r}")
    n_v = int(space.mesh.nvertices)
    kept = off_wall_vertices(space) if wall_vertices == "drop" else np.arange(n_v)
    columns = (np.arange(3)[:, None] * n_v + kept[None, :]).ravel()     # component-major
    Pi = space.constraint.restrict_rows(nodal_vector_interpolation(space))[:, columns]
    L = nodal_laplacian(space, shift)[kept][:, kept] if nodal == "laplacian" else None
    # A smoother of degree 6 at order 3 (box, 3.4k DOFs): LOBPCG 137 -> 88 iterations,
    # 4.9 -> 4.5 s; at order 2 degree 6 was slower than 3 (25k DOFs: 8.3 s against 7.0 s).
    return AuxiliarySpace(interpolation=Pi, points=space.mesh.p[:, kept], nodal_matrix=L,
                          smoothing_degree=6 if space.order >= 3 else 3)


def nodal_laplacian(space, shift: float) -> sp.csr_matrix:
    """L (n_vertices x n_vertices): ∫ a ∇φ_i·∇φ_j + shift ∫ b φ_i φ_j over the piecewise-
    linear hat functions, with a and b the element means of the space's stiffness and mass
    coefficients (1/μ_r and ε_r in the E form). On curved meshes the affine map through the
    vertices is used, which is good enough for a preconditioner."""
    mesh = space.mesh
    t = mesh.t[:4]
    x = mesh.p[:, t]                                         # (3, 4, n_e)
    J = np.moveaxis(x[:, 1:, :] - x[:, :1, :], 2, 0)         # (n_e, 3, 3), columns edges
    det = np.linalg.det(J)
    volume = np.abs(det) / 6.0
    # gradients of the hat functions: rows of J^{-1} for vertices 1..3, minus their sum
    inv = np.linalg.inv(J)                                   # (n_e, 3, 3)
    grads = np.concatenate([-inv.sum(axis=1, keepdims=True), inv], axis=1)   # (n_e, 4, 3)
    a = isotropic_part(space.stiffness_coef).mean(axis=1)
    b = isotropic_part(space.mass_coef).mean(axis=1)
    stiff = np.einsum("eic,ejc->eij", grads, grads) * (a * volume)[:, None, None]
    mass = (np.ones((4, 4)) + np.eye(4))[None] * (b * volume / 20.0)[:, None, None]
    local = stiff + shift * mass
    rows = np.broadcast_to(t.T[:, :, None], local.shape).ravel()
    cols = np.broadcast_to(t.T[:, None, :], local.shape).ravel()
    n_v = int(mesh.nvertices)
    return sp.csr_matrix((local.ravel(), (rows, cols)), shape=(n_v, n_v))


def off_wall_vertices(space) -> np.ndarray:
    """The vertices (ascending) that lie on no facet of an essential wall of the form."""
    essential = essential_kinds(space.form)
    facets = [f for f, name in space.facet_wall.items()
              if space.model.wall_kind(name) in essential]
    on_wall = np.zeros(int(space.mesh.nvertices), dtype=bool)
    if facets:
        on_wall[space.mesh.facets[:, np.array(facets)].ravel()] = True
    return np.flatnonzero(~on_wall)
