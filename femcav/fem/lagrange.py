"""Lagrange elements of order k on tetrahedra, for the scalar potentials whose gradients the
Nédélec space of the same order contains exactly (the discrete gradient of deflation).

Nodes sit on the equispaced lattice of the reference tetrahedron, in scikit-fem's local order
(vertices, edge nodes from the lower to the higher vertex, face nodes, interior nodes); as for
the Nédélec element, tetrahedra are used with vertices sorted by global number, so that
neighbours agree on every shared node.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from skfem.element import ElementH1
from skfem.refdom import RefTet

from .nedelec import VERTICES, _monomials, derivative_matrix, monomial_values


def lattice_nodes(k: int) -> np.ndarray:
    nodes = [VERTICES[v] for v in range(4)]
    for a, b in RefTet.edges:
        nodes += [VERTICES[a] + (VERTICES[b] - VERTICES[a]) * j / k for j in range(1, k)]
    for a, b, c in RefTet.facets:
        nodes += [VERTICES[a] + (VERTICES[b] - VERTICES[a]) * i / k
                  + (VERTICES[c] - VERTICES[a]) * j / k
                  for i in range(1, k) for j in range(1, k - i)]
    nodes += [np.array([i, j, l]) / k for i in range(1, k) for j in range(1, k)
              for l in range(1, k) if i + j + l < k]
    return np.array(nodes, dtype=float)


@lru_cache(maxsize=None)
def _coefficients(k: int) -> tuple[list, np.ndarray]:
    monomials = _monomials(k)
    nodes = lattice_nodes(k)
    V = np.array([[x**m[0] * y**m[1] * z**m[2] for m in monomials] for x, y, z in nodes])
    return monomials, np.linalg.inv(V)


class ElementTetLagrange(ElementH1):
    refdom = RefTet

    def __init__(self, order: int):
        k = order
        self.order = k
        self.nodal_dofs = 1
        self.edge_dofs = k - 1
        self.facet_dofs = (k - 1) * (k - 2) // 2
        self.interior_dofs = (k - 1) * (k - 2) * (k - 3) // 6
        self.maxdeg = k
        self.doflocs = lattice_nodes(k)
        self.dofnames = ["u"] * len(self.doflocs)
        monomials, self._coef = _coefficients(k)
        self._exponents = np.array(monomials)
        self._derivatives = [derivative_matrix(self._exponents, a) for a in range(3)]

    def reference_tables(self, X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Every basis function (n, ...) and its gradient (n, 3, ...) at reference points X."""
        mono = monomial_values(self._exponents, X)
        values = np.tensordot(self._coef.T, mono, axes=(1, 0))
        grads = np.stack([np.tensordot((D @ self._coef).T, mono, axes=(1, 0))
                          for D in self._derivatives], axis=1)
        return values, grads

    def lbasis(self, X, i):
        mono = monomial_values(self._exponents, X)
        c = self._coef[:, i]
        return (np.tensordot(c, mono, axes=(0, 0)),
                np.stack([np.tensordot(D @ c, mono, axes=(0, 0)) for D in self._derivatives]))
