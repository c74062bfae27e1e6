"""Nédélec edge elements of the first kind on tetrahedra, of any order k >= 1.

The reference space is NED_k = P_{k-1}³ ⊕ {x × q : q homogeneous of degree k-1} (J.-C.
Nédélec, "Mixed finite elements in R³", Numer. Math. 35 (1980) 315-341), of dimension
k (k + 2)(k + 3) / 2: 6, 20, 45 for k = 1, 2, 3. Its degrees of freedom are moments

- on each edge a -> b:      ∫ u · (x_b - x_a) q ds,  q in P_{k-1}(edge)    (k per edge)
- on each face (a, b, c):   ∫ u · (x_b - x_a) q dA and ∫ u · (x_c - x_a) q dA,
                            q in P_{k-2}(face)                              (k(k-1) per face)
- inside:                   ∫ u · (x_m - x_0) q dV, m = 1, 2, 3, q in P_{k-3} (interior)

taken in the parametrisation of the reference element, so that they are invariant under the
covariant Piola map u = J^{-T} û. The local basis is the dual basis of these moments, found
numerically once per order. Neighbouring elements agree on a shared edge or face only if they
parametrise it alike: femcav sorts every tetrahedron's vertices by global number (scikit-fem's
``sort_t``), so that every local a < b < c is also a global one and no sign or permutation
correction is needed.

Polynomials are kept as coefficient arrays over the monomials of degree <= k, so that a whole
element's basis is evaluated at once by one matrix product.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from skfem.element import ElementHcurl
from skfem.refdom import RefTet

VERTICES = np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]])


def _monomials(degree: int, exact: bool = False) -> list[tuple[int, int, int]]:
    return [(i, j, k) for i in range(degree + 1) for j in range(degree + 1 - i)
            for k in range(degree + 1 - i - j) if not exact or i + j + k == degree]


def monomial_values(exponents: np.ndarray, X: np.ndarray) -> np.ndarray:
    """x^i y^j z^k for every row (i, j, k) of ``exponents``: shape (n_mono,) + X.shape[1:]."""
    out = np.ones((len(exponents),) + X.shape[1:])
    for axis in range(3):
        for p in range(1, int(exponents[:, axis].max(initial=0)) + 1):
            rows = exponents[:, axis] >= p
            out[rows] *= X[axis]
    return out


def derivative_matrix(exponents: np.ndarray, axis: int) -> np.ndarray:
    """D with D @ c the coefficients of ∂f/∂x_axis for f = Σ c_m x^m (same monomial list)."""
    index = {tuple(e): n for n, e in enumerate(exponents)}
    D = np.zeros((len(exponents), len(exponents)))
    for n, e in enumerate(exponents):
        if e[axis] > 0:
            lowered = list(e)
            lowered[axis] -= 1
            D[index[tuple(lowered)], n] = e[axis]
    return D


def _curl_coefficients(values: np.ndarray, exponents: np.ndarray) -> np.ndarray:
    """Coefficients (..., 3, n_mono) of the curl of fields given by ``values`` (..., 3, n_mono)."""
    D = [derivative_matrix(exponents, a) for a in range(3)]
    d = lambda comp, axis: values[..., comp, :] @ D[axis].T
    return np.stack([d(2, 1) - d(1, 2), d(0, 2) - d(2, 0), d(1, 0) - d(0, 1)], axis=-2)


@lru_cache(maxsize=None)
def _candidates(k: int) -> tuple[np.ndarray, np.ndarray]:
    """A spanning set of NED_k: coefficient arrays (n_cand, 3, n_mono) and the exponents."""
    exponents = np.array(_monomials(k))
    index = {e: n for n, e in enumerate(_monomials(k))}
    cands = []
    for m in _monomials(k - 1):
        for comp in range(3):
            c = np.zeros((3, len(exponents)))
            c[comp, index[m]] = 1.0
            cands.append(c)
    for m in _monomials(k - 1, exact=True):
        for j in range(3):
            # x × (x^m e_j): component i of x × v is x_{i+1} v_{i+2} - x_{i+2} v_{i+1}
            c = np.zeros((3, len(exponents)))
            for i in range(3):
                for other, v_index, sign in (((i + 1) % 3, (i + 2) % 3, 1.0),
                                             ((i + 2) % 3, (i + 1) % 3, -1.0)):
                    if v_index == j:
                        e = list(m)
                        e[other] += 1
                        c[i, index[tuple(e)]] += sign
            cands.append(c)
    return np.array(cands), exponents


def _gauss_line(n: int):
    s, w = np.polynomial.legendre.leggauss(n)
    return 0.5 * (s + 1), 0.5 * w


def _triangle_rule(n: int):
    """Collapsed Gauss rule on {s, t >= 0, s + t <= 1}, exact to degree 2n - 2 or so."""
    s, ws = _gauss_line(n)
    a, b = np.meshgrid(s, s, indexing="ij")
    wa, wb = np.meshgrid(ws, ws, indexing="ij")
    return np.column_stack([a.ravel(), (b * (1 - a)).ravel()]), (wa * wb * (1 - a)).ravel()


def _tet_rule(n: int):
    s, ws = _gauss_line(n)
    a, b, c = np.meshgrid(s, s, s, indexing="ij")
    wa, wb, wc = np.meshgrid(ws, ws, ws, indexing="ij")
    pts = np.column_stack([a.ravel(), (b * (1 - a)).ravel(), (c * (1 - a) * (1 - b)).ravel()])
    return pts, (wa * wb * wc * (1 - a) ** 2 * (1 - b)).ravel()


@lru_cache(maxsize=None)
def moments(k: int) -> tuple[np.ndarray, np.ndarray]:
    """The DOFs as a quadrature: points P (3, n_points) and weights W (n_dofs, 3, n_points),
    so that DOF_i(u) = Σ W[i] * u(P), in scikit-fem's local order: edges, faces, interior.
    The moment weights q are monomials (any basis of the polynomial space would do)."""
    n = k + 3
    blocks = []            # (points (3, n), [(tangent, weight along the points)])
    s, w = _gauss_line(n)
    for a, b in RefTet.edges:
        xa, xb = VERTICES[a], VERTICES[b]
        blocks.append((xa[:, None] + np.outer(xb - xa, s),
                       [(xb - xa, w * s**p) for p in range(k)]))
    if k >= 2:
        pts, wts = _triangle_rule(n)
        for a, b, c in RefTet.facets:
            xa, xb, xc = VERTICES[a], VERTICES[b], VERTICES[c]
            X = xa[:, None] + np.outer(xb - xa, pts[:, 0]) + np.outer(xc - xa, pts[:, 1])
            rows = []
            for p in _monomials(k - 2):
                if p[2] != 0:
                    continue
                q = pts[:, 0] ** p[0] * pts[:, 1] ** p[1]
                rows += [(t, wts * q) for t in (xb - xa, xc - xa)]
            blocks.append((X, rows))
    if k >= 3:
        pts, wts = _tet_rule(n)
        X = pts.T
        rows = []
        for p in _monomials(k - 3):
            q = X[0] ** p[0] * X[1] ** p[1] * X[2] ** p[2]
            rows += [(VERTICES[m] - VERTICES[0], wts * q) for m in range(1, 4)]
        blocks.append((X, rows))
    points = np.hstack([X for X, _ in blocks])
    n_dofs = sum(len(rows) for _, rows in blocks)
    W = np.zeros((n_dofs, 3, points.shape[1]))
    i, start = 0, 0
    for X, rows in blocks:
        for tangent, weight in rows:
            W[i, :, start:start + X.shape[1]] = np.outer(tangent, weight)
            i += 1
        start += X.shape[1]
    return points, W


@lru_cache(maxsize=None)
def basis_coefficients(k: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The dual basis of the moments: value and curl coefficient arrays (n_dofs, 3, n_mono)
    over the monomial exponents (n_mono, 3)."""
    cands, exponents = _candidates(k)
    points, W = moments(k)
    at_points = np.tensordot(cands, monomial_values(exponents, points), axes=(2, 0))
    D = np.einsum("icp,ncp->in", W, at_points)                      # (n_dofs, n_cands)
    dim = k * (k + 2) * (k + 3) // 2
    if D.shape[0] != dim or np.linalg.matrix_rank(D) != dim:
        raise RuntimeError(f"Nédélec order {k}: moments are not unisolvent")
    values = np.tensordot(np.linalg.pinv(D).T, cands, axes=(1, 0))  # (n_dofs, 3, n_mono)
    return values, _curl_coefficients(values, exponents), exponents


def dofs_of(k: int, field) -> np.ndarray:
    """The reference DOFs of fields given as f(X) -> (..., 3, n): shape (n_dofs, ...)."""
    points, W = moments(k)
    return np.tensordot(W, field(points), axes=([1, 2], [-2, -1]))


class ElementTetNedelec(ElementHcurl):
    """First-kind Nédélec element of order k on tetrahedra (use with sorted t)."""

    refdom = RefTet

    def __init__(self, order: int = 2):
        if order < 1:
            raise ValueError("order >= 1")
        self.order = order
        k = order
        self.edge_dofs = k
        self.facet_dofs = k * (k - 1)
        self.interior_dofs = 3 * len(_monomials(k - 3)) if k >= 3 else 0
        self.maxdeg = k
        n = self.edge_dofs * 6 + self.facet_dofs * 4 + self.interior_dofs
        self.dofnames = ["u^t"] * n
        self.doflocs = np.array(
            [VERTICES[a] + (VERTICES[b] - VERTICES[a]) * (j + 1) / (k + 1)
             for a, b in RefTet.edges for j in range(k)]
            + [VERTICES[list(f)].mean(axis=0) for f in RefTet.facets
               for _ in range(self.facet_dofs)]
            + [np.full(3, 0.25)] * self.interior_dofs)
        self._values, self._curls, self._exponents = basis_coefficients(k)

    def orient(self, mapping, i, tind=None):
        # Sorted vertex numbers make every local orientation the global one.
        n = mapping.mesh.t.shape[1]
        ones = np.ones(n, dtype=np.int32)
        return ones if tind is None else ones[tind]

    def reference_tables(self, X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Every basis function and its curl at the reference points X (3, ...):
        two arrays of shape (n_dofs, 3, ...)."""
        mono = monomial_values(self._exponents, X)
        return (np.tensordot(self._values, mono, axes=(2, 0)),
                np.tensordot(self._curls, mono, axes=(2, 0)))

    def lbasis(self, X, i):
        mono = monomial_values(self._exponents, X)
        return (np.tensordot(self._values[i], mono, axes=(1, 0)),
                np.tensordot(self._curls[i], mono, axes=(1, 0)))
