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


class _VectorPolynomial:
    """Σ_terms c e_component x^i y^j z^k, kept as (component, exponents) -> coefficient."""

    def __init__(self, terms: dict):
        self.terms = terms

    def value(self, X: np.ndarray) -> np.ndarray:
        out = np.zeros((3,) + X.shape[1:])
        for (comp, (i, j, k)), c in self.terms.items():
            out[comp] += c * X[0] ** i * X[1] ** j * X[2] ** k
        return out

    def curl(self, X: np.ndarray) -> np.ndarray:
        out = np.zeros((3,) + X.shape[1:])
        for (comp, e), c in self.terms.items():
            for axis in range(3):
                if axis == comp or e[axis] == 0:
                    continue
                d = list(e)
                d[axis] -= 1
                term = c * e[axis] * X[0] ** d[0] * X[1] ** d[1] * X[2] ** d[2]
                # curl = ∇ × (f e_comp): component (axis × comp) gets ±∂_axis f
                target = 3 - axis - comp
                sign = 1.0 if (axis, comp) in ((1, 2), (2, 0), (0, 1)) else -1.0
                out[target] += sign * term
        return out


def _candidates(k: int) -> list[_VectorPolynomial]:
    out = [_VectorPolynomial({(comp, m): 1.0}) for m in _monomials(k - 1) for comp in range(3)]
    for m in _monomials(k - 1, exact=True):
        for j in range(3):
            # x × (x^m e_j): component i of x × v is x_{i+1} v_{i+2} - x_{i+2} v_{i+1}
            terms: dict = {}
            for i in range(3):
                for other, sign in (((i + 1) % 3, 1.0), ((i + 2) % 3, -1.0)):
                    v_index = (i + 2) % 3 if sign > 0 else (i + 1) % 3
                    if v_index != j:
                        continue
                    e = list(m)
                    e[other] += 1
                    key = (i, tuple(e))
                    terms[key] = terms.get(key, 0.0) + sign
            out.append(_VectorPolynomial(terms))
    return out


def _gauss_line(n: int):
    s, w = np.polynomial.legendre.leggauss(n)
    return 0.5 * (s + 1), 0.5 * w


def _triangle_rule(n: int):
    """Collapsed Gauss rule on {s, t >= 0, s + t <= 1}, exact to degree 2n - 2 or so."""
    s, ws = _gauss_line(n)
    pts, wts = [], []
    for a, wa in zip(s, ws):
        for b, wb in zip(s, ws):
            pts.append((a, b * (1 - a)))
            wts.append(wa * wb * (1 - a))
    return np.array(pts), np.array(wts)


def _tet_rule(n: int):
    s, ws = _gauss_line(n)
    pts, wts = [], []
    for a, wa in zip(s, ws):
        for b, wb in zip(s, ws):
            for c, wc in zip(s, ws):
                x = a
                y = b * (1 - a)
                z = c * (1 - a) * (1 - b)
                pts.append((x, y, z))
                wts.append(wa * wb * wc * (1 - a) ** 2 * (1 - b))
    return np.array(pts), np.array(wts)


def _scalar_basis_1d(degree: int, s: np.ndarray) -> list[np.ndarray]:
    """Legendre-like moment weights on [0, 1]: 1, s, s², ... (any basis of P_degree works)."""
    return [s**p for p in range(degree + 1)]


@lru_cache(maxsize=None)
def moment_functionals(k: int):
    """The DOFs as a list of functions mapping a field evaluator f(X) -> (3, n) to a number,
    in scikit-fem's local order: edges, then faces, then interior."""
    funcs = []
    n = k + 3
    s, w = _gauss_line(n)
    for a, b in RefTet.edges:
        xa, xb = VERTICES[a], VERTICES[b]
        X = (xa[:, None] + np.outer(xb - xa, s))
        for q in _scalar_basis_1d(k - 1, s):
            funcs.append(lambda f, X=X, t=xb - xa, q=q, w=w: np.sum(w * q * (t @ f(X))))
    if k >= 2:
        pts, wts = _triangle_rule(n)
        for a, b, c in RefTet.facets:
            xa, xb, xc = VERTICES[a], VERTICES[b], VERTICES[c]
            X = xa[:, None] + np.outer(xb - xa, pts[:, 0]) + np.outer(xc - xa, pts[:, 1])
            for p in _monomials(k - 2):
                if len(p) and p[2] != 0:
                    continue
                q = pts[:, 0] ** p[0] * pts[:, 1] ** p[1]
                for t in (xb - xa, xc - xa):
                    funcs.append(lambda f, X=X, t=t, q=q, w=wts: np.sum(w * q * (t @ f(X))))
    if k >= 3:
        pts, wts = _tet_rule(n)
        X = pts.T
        for p in _monomials(k - 3):
            q = X[0] ** p[0] * X[1] ** p[1] * X[2] ** p[2]
            for m in range(1, 4):
                t = VERTICES[m] - VERTICES[0]
                funcs.append(lambda f, X=X, t=t, q=q, w=wts: np.sum(w * q * (t @ f(X))))
    return funcs


@lru_cache(maxsize=None)
def dual_coefficients(k: int) -> tuple[list[_VectorPolynomial], np.ndarray]:
    """Candidate polynomials and the coefficients C with basis_i = Σ_j C[j, i] cand_j."""
    cands = _candidates(k)
    funcs = moment_functionals(k)
    D = np.array([[fn(c.value) for c in cands] for fn in funcs])   # (n_dofs, n_cands)
    dim = k * (k + 2) * (k + 3) // 2
    if len(funcs) != dim or np.linalg.matrix_rank(D) != dim:
        raise RuntimeError(f"Nédélec order {k}: moments are not unisolvent")
    return cands, np.linalg.pinv(D)


def dofs_of(k: int, field) -> np.ndarray:
    """The reference DOFs of a field given as f(X) -> (3, n) values."""
    return np.array([fn(field) for fn in moment_functionals(k)])


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
        self._cands, self._coef = dual_coefficients(k)

    def orient(self, mapping, i, tind=None):
        # Sorted vertex numbers make every local orientation the global one.
        n = mapping.mesh.t.shape[1]
        ones = np.ones(n, dtype=np.int32)
        return ones if tind is None else ones[tind]

    def lbasis(self, X, i):
        column = self._coef[:, i]
        phi = sum(c * cand.value(X) for c, cand in zip(column, self._cands) if c != 0.0)
        dphi = sum(c * cand.curl(X) for c, cand in zip(column, self._cands) if c != 0.0)
        return phi, dphi
