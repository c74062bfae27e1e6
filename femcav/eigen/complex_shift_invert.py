"""The lossy eigenproblem solved directly: K x = k0² M x with complex symmetric K or M.

A complex permittivity makes the pencil complex symmetric (not Hermitian), so ARPACK's
generalised symmetric mode does not apply. We hand ARPACK's non-symmetric driver the standard
problem for OP = P (K - σM)⁻¹ M, with P removing gradient fields as in the lossless solver
(gradients stay in the kernel of K whatever the permittivity), and map its eigenvalues ν back
with k0² = σ + 1/ν.
"""

from __future__ import annotations

import numpy as np
from scipy.sparse.linalg import LinearOperator, eigs

from .interface import EigenPairs


def solve(K, M, projector, factorize, *, shift: float, count: int) -> EigenPairs:
    """The ``count`` complex k0² nearest the real ``shift`` in the shift-invert sense, with
    their vectors (normalised so that xᵀ M x = 1, the complex-symmetric counterpart of
    M-normalisation), ascending by real part; ``projector`` removes the kernel."""
    n = K.shape[0]
    solve_shifted = factorize((K - shift * M).tocsc())
    operator = LinearOperator((n, n), dtype=complex,
                              matvec=lambda v: projector.remove(solve_shifted(M @ v)))
    start = projector.remove(np.random.default_rng(12345).standard_normal(n).astype(complex))
    nu, vectors = eigs(operator, k=min(count, n - 2), which="LM", v0=start,
                       ncv=min(n - 1, max(2 * count + 1, 20)))
    keep = np.abs(nu) > 0
    values, vectors = shift + 1.0 / nu[keep], vectors[:, keep]
    scale = np.sqrt(np.einsum("ij,ij->j", vectors, M @ vectors))
    vectors = vectors / np.where(scale != 0, scale, 1.0)
    order = np.argsort(values.real)
    return EigenPairs(values=values[order], vectors=vectors[:, order],
                      stats={"shift": shift, "requested": int(min(count, n - 2))})


def with_complex_frequencies(modes: list, k0_squared: np.ndarray) -> list:
    """Each mode (a dataclass with frequency_hz) given the complex frequency nearest its real
    one among the complex eigenvalues ``k0_squared``, and the Q it implies,
    Q = Re ω / (2 Im ω)."""
    import math
    from dataclasses import replace

    from scipy.constants import c

    omegas = c * np.sqrt(k0_squared)
    out = []
    for mode in modes:
        w = omegas[np.argmin(np.abs(omegas.real - 2 * math.pi * mode.frequency_hz))]
        q = w.real / (2 * abs(w.imag)) if w.imag != 0 else math.inf
        out.append(replace(mode, complex_frequency_hz=float(w.real / (2 * math.pi)),
                           q_dielectric_complex=float(q)))
    return out
