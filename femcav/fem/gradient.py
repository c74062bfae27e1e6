"""The discrete gradient and the M-orthogonal projection that removes gradient fields.

For lowest-order Nédélec elements a DOF is the line integral of the field along its edge,
from the lower to the higher node number (scikit-fem's orientation). The gradient of a
piecewise-linear nodal function is therefore exactly G @ phi with G[e, head] = +1 and
G[e, tail] = -1. Every such field lies in the kernel of the curl-curl operator; removing the
component in range(G) keeps eigen iterations away from that large, degenerate kernel.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp


def discrete_gradient(mesh) -> sp.csr_matrix:
    """G (n_edges x n_nodes) for a scikit-fem tetrahedral mesh."""
    tail, head = mesh.edges
    n_edges = tail.size
    rows = np.concatenate([np.arange(n_edges), np.arange(n_edges)])
    cols = np.concatenate([tail, head])
    vals = np.concatenate([-np.ones(n_edges), np.ones(n_edges)])
    return sp.csr_matrix((vals, (rows, cols)), shape=(n_edges, mesh.nvertices))


class GradientProjector:
    """Split a field x into its gradient part G (GᵀMG)⁻¹ GᵀM x and the rest.

    ``G`` and ``M`` are already restricted to the free DOFs and free nodes. ``factorize``
    takes a sparse matrix and returns a solve function (see femcav.eigen.factorization).
    """

    def __init__(self, M, G, factorize):
        self.M = M
        self.G = G.tocsr()
        self._solve = factorize((self.G.T @ M @ self.G).tocsc())

    def gradient_part(self, x: np.ndarray) -> np.ndarray:
        return self.G @ self._solve(self.G.T @ (self.M @ x))

    def remove(self, x: np.ndarray) -> np.ndarray:
        return x - self.gradient_part(x)
