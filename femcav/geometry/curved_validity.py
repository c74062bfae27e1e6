"""How far each curved (10-node) tetrahedron is from folding over: the smallest ratio of the
Jacobian determinant of its quadratic map to that of its straight tetrahedron.

A midside node moved too far (a wrong node number, a curving step that overshot) folds the
element: det J changes sign inside it, the assembly divides by |det J| near zero, and every
mode comes out NaN or wrong. det J of a quadratic tetrahedron is a polynomial of degree 3 in
the reference coordinates, so its values at the 20 points of the degree-3 lattice (all
barycentric coordinates in {0, 1/3, 2/3, 1}) determine it; we take its minimum there. That
finds every element folded at a lattice point, and most others: a sign change strictly
between lattice points with positive values at all 20 needs a strongly bent element, which
the size limit below refuses as well (a ratio under CURVED_RATIO at some lattice point).
"""

from __future__ import annotations

import itertools

import numpy as np

# Refused below this share of the straight element's det J anywhere on the lattice: the map
# is (nearly) singular there. Minima measured on gmsh's second-order builder meshes: pillbox
# 0.62 to 0.93 (5 to 1.5 mm), coaxial re-entrant 0.34 and 0.57 (3, 2 mm), DR fixture 0.44 to
# 0.72 (2.2 to 1 mm) but 0.013 at 2.9 mm, and a tuning post in a box -0.024 at 3 mm (folded:
# gmsh's setOrder does not untangle). Builders therefore straighten such elements
# (``straighten_folded``); gmsh's own untangling (optimize "HighOrderElastic") took 14 s for
# 16k tetrahedra.
CURVED_RATIO = 0.05

# Edges of the midside nodes 4..9 in VTK (and meshio) order.
_EDGES = ((0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3))
_D_LAMBDA = np.array([[-1.0, -1.0, -1.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]])


def _lattice() -> np.ndarray:
    """Barycentric coordinates (20, 4) of the degree-3 lattice."""
    return np.array([c for c in itertools.product(range(4), repeat=4) if sum(c) == 3]) / 3.0


def _shape_gradients(lam: np.ndarray) -> np.ndarray:
    """Gradients (points, 10, 3) of the quadratic shape functions in reference coordinates:
    corners λ_i (2 λ_i − 1), midsides 4 λ_i λ_j."""
    grads = np.empty((len(lam), 10, 3))
    for i in range(4):
        grads[:, i] = (4 * lam[:, i] - 1)[:, None] * _D_LAMBDA[i]
    for k, (i, j) in enumerate(_EDGES):
        grads[:, 4 + k] = 4 * (lam[:, j, None] * _D_LAMBDA[i] + lam[:, i, None] * _D_LAMBDA[j])
    return grads


_GRADIENTS = _shape_gradients(_lattice())                            # (20, 10, 3)
_FLAT_GRADIENTS = _GRADIENTS.transpose(1, 0, 2).reshape(10, -1)       # (10, 60)


def jacobian_ratios(points: np.ndarray, tets10: np.ndarray, chunk: int = 50_000) -> np.ndarray:
    """Per element, min over the lattice of det J(quadratic) / det J(straight corners)."""
    out = np.empty(len(tets10))
    for start in range(0, len(tets10), chunk):
        x = points[tets10[start:start + chunk]]                      # (n, 10, 3)
        # J[n, p, i, k] = Σ_a x[n, a, i] dN_a/dξ_k at lattice point p, as one matrix product
        n = len(x)
        jac = np.ascontiguousarray((np.swapaxes(x, 1, 2).reshape(3 * n, 10) @ _FLAT_GRADIENTS)
                                   .reshape(n, 3, len(_GRADIENTS), 3).transpose(1, 3, 0, 2))
        out[start:start + chunk] = (_det3(jac) / _straight_det(x)[:, None]).min(axis=1)
    return out


def _straight_det(x: np.ndarray) -> np.ndarray:
    """det [x1 - x0, x2 - x0, x3 - x0] of the corners of (n, 10, 3) elements."""
    edges = x[:, 1:4] - x[:, :1]                                   # (n, edge k, coordinate i)
    return _det3(np.ascontiguousarray(edges.transpose(2, 1, 0)))


def _det3(m: np.ndarray) -> np.ndarray:
    """Determinants of 3 x 3 matrices stored as m[i, k, ...] (row i, column k), by cofactors:
    no LU factorisation per matrix, and contiguous arrays of any shape after the first two
    axes."""
    return (m[0, 0] * (m[1, 1] * m[2, 2] - m[1, 2] * m[2, 1])
            - m[0, 1] * (m[1, 0] * m[2, 2] - m[1, 2] * m[2, 0])
            + m[0, 2] * (m[1, 0] * m[2, 1] - m[1, 1] * m[2, 0]))


def worst_point(points: np.ndarray, tets10_row: np.ndarray) -> np.ndarray:
    """The lattice point of one element where its ratio is smallest, in metres."""
    x = points[tets10_row]
    jac = (x.T @ _FLAT_GRADIENTS).reshape(3, len(_GRADIENTS), 3).transpose(0, 2, 1)
    lam = _lattice()[int(np.argmin(_det3(jac) / _straight_det(x[None])[0]))]
    shape = np.concatenate([lam * (2 * lam - 1), [4 * lam[i] * lam[j] for i, j in _EDGES]])
    return shape @ x


def straighten_folded(points: np.ndarray, tets10: np.ndarray, passes: int = 4) -> np.ndarray:
    """``points`` with the midside nodes of elements below CURVED_RATIO moved back onto their
    edges' midpoints (a straight edge is valid whatever its neighbours); repeated because a
    shared midside node also changes its neighbours. The rest of the mesh keeps its nodes."""
    points = points.copy()
    for _ in range(passes):
        bad = jacobian_ratios(points, tets10) < CURVED_RATIO
        if not bad.any():
            break
        for k, (i, j) in enumerate(_EDGES):
            points[tets10[bad, 4 + k]] = 0.5 * (points[tets10[bad, i]] + points[tets10[bad, j]])
    return points
