"""Nodal vector interpolation: the edge-space DOFs of a continuous piecewise-linear vector field.

Π maps the values u_v of a vector field at the mesh vertices to the Nédélec DOFs (of the
space's order) of the field u(x) = Σ_v λ_v(x) u_v, λ_v the piecewise-linear hat functions.
It is the "nodal" transfer of auxiliary-space preconditioning (R. Hiptmair and J. Xu, "Nodal
auxiliary space preconditioning in H(curl) and H(div) spaces", SIAM J. Numer. Anal. 45(6)
(2007) 2483-2509), see femcav.eigen.hx.

Columns are component-major: column c * n_vertices + v holds component c (x, y, z) of the
value at vertex v. For order 1 the DOF of the edge a -> b is ∫ u · (x_b - x_a) ds over
s in [0, 1], i.e. (x_b - x_a) · (u_a + u_b) / 2. For higher orders the DOFs are the
moments of femcav.fem.nedelec taken on the reference element, with the reference field
û = Jᵀ u(F(X)) of the affine map F through the element's four vertices.

On a curved (quadratic) mesh the space's basis lives on the curved element map while Π uses
the affine map through the vertices: Π then interpolates a slightly different field. That is
good enough for a preconditioner, which only needs Π to capture the smooth part of a field,
but Π is then no exact interpolation.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
import scipy.sparse as sp

from .assembly import shared_entries_csr
from .nedelec import moments


@lru_cache(maxsize=None)
def _reference_weights(order: int) -> np.ndarray:
    """R (n_dofs, 4, 3): DOF_i of the reference field λ_v(X) e_d is R[i, v, d]."""
    X, W = moments(order)
    hats = np.stack([1.0 - X[0] - X[1] - X[2], X[0], X[1], X[2]])     # (4, n_points)
    return np.einsum("idp,vp->ivd", W, hats)


def nodal_vector_interpolation(space) -> sp.csr_matrix:
    """Π (all edge-space DOFs x 3 n_vertices, component-major columns) of ``space``.

    A DOF is a functional on the field restricted to its edge, face or element; for an edge
    or face DOF it depends only on the vertices of that edge or face (the affine map restricted
    to a sub-simplex is fixed by its vertices), so every element sharing the DOF gives the
    same row and one copy is kept.
    """
    mesh = space.mesh
    R = _reference_weights(space.order)                    # (n_dofs, 4, 3)
    t = mesh.t[:4]                                           # corner vertices, sorted
    corners = mesh.p[:, t]                                   # (3, 4, n_elements)
    J = corners[:, 1:, :] - corners[:, :1, :]                # (3 physical c, 3 reference d, n_e)
    # û = Jᵀ u: DOF_i = Σ_v Σ_d R[i, v, d] (Jᵀ u_v)_d = Σ_v Σ_c (Σ_d R[i, v, d] J[c, d]) u_v,c
    local = np.einsum("ivd,cde->eivc", R, J)                # (n_e, n_dofs, 4, 3)
    n_v = int(mesh.nvertices)                                # corners come first in p
    rows = np.broadcast_to(space.dofs.element_dofs.T[:, :, None, None], local.shape)
    cols = (np.arange(3)[None, None, None, :] * n_v
            + t.T[:, None, :, None])                          # (n_e, 1, 4, 3)
    cols = np.broadcast_to(cols, local.shape)
    out = shared_entries_csr(rows.ravel(), cols.ravel(), local.ravel(),
                             (space.dofs.N, 3 * n_v))
    out.eliminate_zeros()
    return out
