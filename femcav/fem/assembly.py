"""Stiffness and mass matrices of the curl-curl eigenproblem K x = k0² M x.

With the covariant Piola map u = J^{-T} û and curl u = J curl û / det J, both integrands are
reference quantities contracted with a 3x3 metric of the element map:

    u · v             = ûᵀ (J^{-1} J^{-T}) v̂
    curl u · curl v   = curl ûᵀ (Jᵀ J) curl v̂ / det² J

so the reference basis is evaluated once for all elements and only the metric varies from
point to point (per element on flat tetrahedra, per quadrature point on curved ones). The
element matrices are then one batched matrix product per block of elements.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .coefficients import is_tensor
from .space import EdgeSpace

# Elements per block: bounds the temporary (block, points, 3, n_basis) array to ~100 MB at
# third order (45 basis functions, 24 points).
BLOCK = 4096


def assemble_stiffness(space: EdgeSpace, coefficient):
    """∫ curl v · a curl u over the kept DOFs, a (a scalar or a 3x3 tensor, real or complex)
    given at the quadrature points."""
    return _reduced_csr(space, _element_matrices(space, coefficient, curl=True))


def assemble_mass(space: EdgeSpace, coefficient):
    """∫ v · b u over the kept DOFs, b given at the quadrature points as for the stiffness."""
    return _reduced_csr(space, _element_matrices(space, coefficient, curl=False))


def assemble(space: EdgeSpace):
    """(K, M) over the kept DOFs (``space.constraint``), as CSR matrices with one sparsity
    pattern, in the dtype the coefficients need.

    Real coefficients are gathered as the real and imaginary parts of one complex matrix,
    so that the summation of element contributions runs once (it is most of the assembly
    time on high-order meshes); complex ones are summed apart."""
    if (np.iscomplexobj(space.stiffness_coef) or np.iscomplexobj(space.mass_coef)
            or space.constraint.dtype.kind == "c"):   # a phase-linked (periodic) constraint
        return (assemble_stiffness(space, space.stiffness_coef),
                assemble_mass(space, space.mass_coef))
    combined = _reduced_csr(space, _element_matrices(space, space.stiffness_coef, curl=True)
                         + 1j * _element_matrices(space, space.mass_coef, curl=False))
    pattern = (combined.indices, combined.indptr)
    return (sp.csr_matrix((combined.data.real.copy(), *pattern), shape=combined.shape),
            sp.csr_matrix((combined.data.imag.copy(), *pattern), shape=combined.shape))


def _element_matrices(space: EdgeSpace, coefficient, *, curl: bool,
                      elements: np.ndarray | None = None) -> np.ndarray:
    """(n_elements, n_basis, n_basis) element matrices of one of the two integrands, of
    every element or of the ``elements`` given (a process's share)."""
    X, W = space.quadrature
    values, curls = space.element.reference_tables(X)          # (n_basis, 3, n_points)
    table = (curls if curl else values).transpose(2, 1, 0)      # (n_points, 3, n_basis)
    n_points, _, n_basis = table.shape
    reference = table.reshape(n_points * 3, n_basis)            # rows (point, component)
    mapping = space.mesh.mapping()
    chosen = np.arange(space.mesh.nelements) if elements is None else np.asarray(elements)
    local = np.empty((chosen.size, n_basis, n_basis), dtype=np.result_type(coefficient, float))
    for start in range(0, chosen.size, BLOCK):
        rows = slice(start, min(start + BLOCK, chosen.size))
        block = chosen[rows]
        J = np.moveaxis(mapping.DF(X, tind=block), (0, 1), (2, 3))   # (block, points, 3, 3)
        det = np.abs(np.linalg.det(J))[..., None, None]
        c = coefficient[block]
        if curl:     # Jᵀ a J / |det J|
            metric = (np.einsum("eqij,eqik->eqjk", J, J) if not is_tensor(c)
                      else np.einsum("eqji,eqjk,eqkl->eqil", J, c, J)) / det
        else:        # J⁻¹ b J⁻ᵀ |det J|
            inverse = np.linalg.inv(J)
            metric = (np.einsum("eqij,eqkj->eqik", inverse, inverse) if not is_tensor(c)
                      else np.einsum("eqij,eqjk,eqlk->eqil", inverse, c, inverse)) * det
        metric = metric * (W[:, None, None] if is_tensor(c) else (W * c)[..., None, None])
        weighted = np.einsum("eqab,qbn->eqan", metric, table)   # metric applied to the basis
        local[rows] = reference.T @ weighted.reshape(block.size, n_points * 3, n_basis)
    return local


def element_matrices(space: EdgeSpace, elements: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The stiffness and mass element matrices of ``elements`` only, with the space's own
    coefficients: what one process of a distributed assembly sums."""
    return (_element_matrices(space, space.stiffness_coef, curl=True, elements=elements),
            _element_matrices(space, space.mass_coef, curl=False, elements=elements))


def _reduced_csr(space: EdgeSpace, local: np.ndarray):
    """Sum element matrices into the reduced operator Pᴴ A P of the space's constraint. When
    the constraint only drops DOFs (essential walls), their entries are dropped before the
    summation instead of forming the full matrix."""
    constraint = space.constraint
    element_dofs = space.dofs.element_dofs.T                    # (n_elements, n_basis)
    if constraint.selects_only:
        element_dofs = constraint.reduced_index[element_dofs]
        n = constraint.size
    else:
        n = constraint.n_full
    rows = np.broadcast_to(element_dofs[:, :, None], local.shape)
    cols = np.broadcast_to(element_dofs[:, None, :], local.shape)
    keep = (rows >= 0) & (cols >= 0)
    summed = sp.coo_matrix((local[keep], (rows[keep], cols[keep])), shape=(n, n)).tocsr()
    return summed if constraint.selects_only else constraint.reduce(summed)


def shared_entries_csr(rows, cols, vals, shape) -> sp.csr_matrix:
    """A CSR matrix from entries that every element sharing a DOF gives alike (interpolation
    and gradient matrices, whose DOFs are values, not sums over elements): one copy of each
    is kept."""
    _, first = np.unique(np.asarray(rows, dtype=np.int64) * shape[1] + cols, return_index=True)
    return sp.csr_matrix((vals[first], (rows[first], cols[first])), shape=shape)
