"""The per-mode checks of post.checks on PETSc matrices spread over MPI processes.

The same three measures, but every product and inner product is a PETSc one: each process
multiplies and projects its own rows, and the norms and the Gram matrix of the modes are
sums of per-process parts (one MPI allreduce for the Gram matrix). Nothing of size n is
gathered, where the NumPy path of post.checks would gather M x, K x and the projected
vectors on every process.
"""

from __future__ import annotations

import math

import numpy as np

from .checks import ModeChecks


def check_distributed_modes(K, M, projector, values: np.ndarray,
                            vectors: np.ndarray) -> list[ModeChecks]:
    """``K``, ``M`` eigen.distributed_matrix.DistributedMatrix, ``projector`` its
    DistributedGradientProjector; ``vectors`` (n, k) in the reduced numbering (each process
    reads only its rows), ``values`` real (the backend is Hermitian)."""
    rows = M.row_vectors
    X = [rows.to_petsc(vectors[:, j]) for j in range(vectors.shape[1])]
    MX = [M.mat.createVecLeft() for _ in X]
    residual, divergence = [], []
    KX, MG, gradient = K.mat.createVecLeft(), M.mat.createVecLeft(), rows.create()
    for x, mx, value in zip(X, MX, values):
        M.mat.mult(x, mx)
        K.mat.mult(x, KX)
        KX.axpy(-value, mx)                       # K x - λ M x
        residual.append(KX.norm() / max(abs(value) * mx.norm(), np.finfo(float).tiny))
        x.copy(gradient)
        projector.remove_in_place(gradient)
        gradient.aypx(-1.0, x)                    # x - P x: the gradient part
        M.mat.mult(gradient, MG)
        divergence.append(math.sqrt(abs(gradient.dot(MG))))
    local = np.array([[x.getArray(readonly=True) @ mx.getArray(readonly=True) for mx in MX]
                      for x in X]).reshape(len(X), len(X))
    gram = np.abs(M.stack.comm.allreduce(local))
    norms = np.sqrt(np.diag(gram))
    divergence = np.array(divergence) / norms
    gram = gram / np.outer(norms, norms)
    np.fill_diagonal(gram, 0.0)
    orthogonality = gram.max(axis=1) if len(X) > 1 else np.zeros(len(X))
    return [ModeChecks(float(r), float(d), float(o))
            for r, d, o in zip(residual, divergence, orthogonality)]
