"""The discrete gradient: the kernel basis of the curl-curl operator on the edge space.

The gradient of every order-k Lagrange function is exactly a Nédélec field of order k; for
k = 1 a DOF is the line integral along its edge, so G[e, head] = +1 and G[e, tail] = -1.
Every such field lies in the kernel of the curl-curl operator; removing the component in
range(G) (femcav.eigen.projection) keeps eigen iterations away from that large, degenerate
kernel.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
import scipy.sparse as sp

from .assembly import shared_entries_csr
from .lagrange import ElementTetLagrange
from .nedelec import dofs_of


def discrete_gradient(space) -> sp.csr_matrix:
    """G (edge-space DOFs x scalar-space DOFs): the Nédélec DOFs of the gradient of every
    Lagrange basis function of the same order. ∇P_k lies inside NED_k, so G is exact, and the
    moments are Piola-invariant, so one reference matrix serves every element."""
    rows, cols, vals = gradient_entries(space)
    return shared_entries_csr(rows, cols, vals, (space.dofs.N, space.scalar_dofs.N))


def gradient_entries(space, elements: np.ndarray | None = None):
    """(edge DOF, scalar DOF, value) of G as every element (or every one of ``elements``)
    gives them; elements sharing a DOF give the same entry again."""
    local = _reference_gradient(space.order)
    rows_local, cols_local = np.nonzero(local)
    edge_dofs = space.dofs.element_dofs           # (n_ned, n_elements)
    scalar_dofs = space.scalar_dofs.element_dofs  # (n_lag, n_elements)
    if elements is not None:
        edge_dofs, scalar_dofs = edge_dofs[:, elements], scalar_dofs[:, elements]
    rows = edge_dofs[rows_local].ravel()
    cols = scalar_dofs[cols_local].ravel()
    vals = np.repeat(local[rows_local, cols_local], edge_dofs.shape[1])
    return rows, cols, vals


@lru_cache(maxsize=None)
def _reference_gradient(k: int) -> np.ndarray:
    """(n_ned, n_lag): Nédélec moments of the gradients of the reference Lagrange basis."""
    lagrange = ElementTetLagrange(k)
    local = dofs_of(k, lambda X: lagrange.reference_tables(X)[1])
    local[np.abs(local) < 1e-12] = 0.0
    return local


def kernel_basis(space) -> sp.csr_matrix:
    """The kernel basis of the reduced problem: R G Q, the gradients of the constrained
    potentials (scalar constraint Q) in the reduced edge DOFs (R the rows the edge constraint
    keeps)."""
    G = discrete_gradient(space)
    return (space.constraint.restrict_rows(G) @ space.scalar_constraint.P).tocsr()
