"""A mode's field and curl at the quadrature points of its space, from the reference tables.

The post-processing that runs for every mode (resolution, magnetic filling, energies by
region) needs the field or its curl at the quadrature points. As in the assembly
(fem.assembly), the reference basis is evaluated once and the element map applied per
point: u = J^{-T} Σ x_n û_n and curl u = J Σ x_n curl û_n / det J, the sum over an
element's basis functions being one matrix product for a block of elements. Measured on a
pillbox (order 3, 786 curved tetrahedra, 10 modes, one thread): this avoids building the
scikit-fem basis (0.1 to 0.2 s) and its per-function interpolation loop (0.11 s for
resolution and filling together); fields agree with scikit-fem's ``interpolate`` to round-off
(tests/test_quadrature_fields.py).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

# Elements per block: bounds the temporaries (block, 3, n_points) and (block, n_points, 3, 3).
BLOCK = 4096


@dataclass(frozen=True)
class QuadratureFields:
    value: np.ndarray    # (3, n_elements, n_points): the field
    curl: np.ndarray     # (3, n_elements, n_points): its curl
    dx: np.ndarray       # (n_elements, n_points): quadrature weight times |det J|


@dataclass(frozen=True)
class QuadratureMap:
    """What the element map contributes at every quadrature point, computed once per space
    (18 numbers a point: fewer than the scikit-fem basis it replaces holds at any order)."""

    values: np.ndarray        # (n_basis, 3 n_points): reference basis functions
    curls: np.ndarray         # (n_basis, 3 n_points): their reference curls
    inverse: np.ndarray       # (n_elements, n_points, 3, 3): J⁻¹
    curl_map: np.ndarray      # (n_elements, n_points, 3, 3): J / det J
    dx: np.ndarray            # (n_elements, n_points)


def quadrature_map(space, elements: np.ndarray | None = None) -> QuadratureMap:
    """The map of every element, or of ``elements`` only (in that order)."""
    X, W = space.quadrature
    values, curls = space.element.reference_tables(X)          # (n_basis, 3, n_points)
    n_basis, _, n_points = values.shape
    mapping = space.mesh.mapping()
    chosen = np.arange(space.mesh.nelements) if elements is None else np.asarray(elements)
    n_elements = chosen.size
    inverse = np.empty((n_elements, n_points, 3, 3))
    curl_map = np.empty_like(inverse)
    dx = np.empty((n_elements, n_points))
    for start in range(0, n_elements, BLOCK):
        block = slice(start, min(start + BLOCK, n_elements))
        J = np.moveaxis(mapping.DF(X, tind=chosen[block]), (0, 1), (2, 3))
        det = np.linalg.det(J)
        inverse[block] = np.linalg.inv(J)
        curl_map[block] = J / det[..., None, None]
        dx[block] = W * np.abs(det)
    return QuadratureMap(values=values.reshape(n_basis, -1), curls=curls.reshape(n_basis, -1),
                         inverse=inverse, curl_map=curl_map, dx=dx)


def fields_at_quadrature(space, dofs: np.ndarray,
                         part: tuple[np.ndarray, QuadratureMap] | None = None
                         ) -> QuadratureFields:
    """Field and curl of ``dofs`` (over every DOF of the space's mesh, real or complex) at
    the points of ``space.quadrature``, element-major like scikit-fem's basis; on every
    element, or with ``part`` = (elements, quadrature_map(space, elements)) on those."""
    geometry = space.quadrature_map if part is None else part[1]
    n_elements, n_points = geometry.dx.shape
    element_dofs = space.dofs.element_dofs                      # (n_basis, n_elements)
    if part is not None:
        element_dofs = element_dofs[:, part[0]]
    value = np.empty((3, n_elements, n_points), dtype=np.result_type(dofs, float))
    curl = np.empty_like(value)
    for start in range(0, n_elements, BLOCK):
        block = slice(start, min(start + BLOCK, n_elements))
        coefficients = dofs[element_dofs[:, block]].T                # (block, n_basis)
        size = coefficients.shape[0]
        reference_value = (coefficients @ geometry.values).reshape(size, 3, n_points)
        reference_curl = (coefficients @ geometry.curls).reshape(size, 3, n_points)
        value[:, block] = np.einsum("eqkj,ekq->jeq", geometry.inverse[block], reference_value)
        curl[:, block] = np.einsum("eqjk,ekq->jeq", geometry.curl_map[block], reference_curl)
    return QuadratureFields(value=value, curl=curl, dx=geometry.dx)
