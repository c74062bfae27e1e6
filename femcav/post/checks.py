"""Per-mode checks: is each returned pair an eigenpair, free of gradient content, and
orthogonal to the others? A mode that fails any of them is reported as failed, never
silently printed as a plausible number."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..eigen.hermitian import column_dots, ct

# Limits for a pass. ARPACK converges to near machine precision, so a healthy mode is many
# orders of magnitude below these; values near a limit mean the solve went wrong.
RESIDUAL_LIMIT = 1e-6
DIVERGENCE_LIMIT = 1e-6
ORTHOGONALITY_LIMIT = 1e-6


@dataclass(frozen=True)
class ModeChecks:
    residual: float       # ||K x - λ M x|| / ||λ M x||
    divergence: float     # ||gradient part of x||_M / ||x||_M
    orthogonality: float  # max over other modes y of |xᵀ M y| / (||x||_M ||y||_M)

    @property
    def passed(self) -> bool:
        return (self.residual <= RESIDUAL_LIMIT and self.divergence <= DIVERGENCE_LIMIT
                and self.orthogonality <= ORTHOGONALITY_LIMIT)

    def failures(self) -> list[str]:
        out = []
        if not self.residual <= RESIDUAL_LIMIT:
            out.append(f"residual {self.residual:.1e} > {RESIDUAL_LIMIT:.0e}")
        if not self.divergence <= DIVERGENCE_LIMIT:
            out.append(f"divergence {self.divergence:.1e} > {DIVERGENCE_LIMIT:.0e}")
        if not self.orthogonality <= ORTHOGONALITY_LIMIT:
            out.append(f"orthogonality {self.orthogonality:.1e} > {ORTHOGONALITY_LIMIT:.0e}")
        return out


def check_modes(K, M, projector, values: np.ndarray, vectors: np.ndarray, *,
                hermitian: bool = True) -> list[ModeChecks]:
    """The checks of each pair. The modes of a Hermitian pencil are orthogonal in xᴴ M y;
    those of a complex-symmetric one (losses inside) in the bilinear xᵀ M y, so that is
    the product whose off-diagonal must vanish there."""
    if hasattr(M, "row_vectors"):     # PETSc matrices over MPI processes: products in PETSc
        from .distributed_checks import check_distributed_modes
        return check_distributed_modes(K, M, projector, values, vectors)
    MX = M @ vectors
    KX = K @ vectors
    residual = (np.linalg.norm(KX - MX * values, axis=0)
                / np.maximum(np.linalg.norm(MX * values, axis=0), np.finfo(float).tiny))
    grad = projector.gradient_part(vectors)
    if hermitian:
        norms = np.sqrt(column_dots(vectors, MX))
        divergence = np.sqrt(np.abs(column_dots(grad, M @ grad))) / norms
        gram = np.abs(ct(vectors) @ MX)
    else:
        norms = np.sqrt(np.abs(np.einsum("ij,ij->j", vectors, MX)))
        divergence = np.sqrt(np.abs(np.einsum("ij,ij->j", grad, M @ grad))) / norms
        gram = np.abs(vectors.T @ MX)
    gram = gram / np.outer(norms, norms)
    np.fill_diagonal(gram, 0.0)
    orthogonality = gram.max(axis=1) if len(values) > 1 else np.zeros(len(values))
    return [ModeChecks(float(r), float(d), float(o))
            for r, d, o in zip(residual, divergence, orthogonality)]
