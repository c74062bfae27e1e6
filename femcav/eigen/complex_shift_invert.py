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

from .interface import EigenPairs, EigenStats


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
                      stats=EigenStats(shift=shift, requested=int(min(count, n - 2))))


def with_complex_frequencies(modes: list, k0_squared: np.ndarray) -> list:
    """Each mode (a dataclass with frequency_hz) given a complex frequency among those of
    the complex eigenvalues ``k0_squared`` (1/m²), and the Q it implies,
    Q = Re f / (2 |Im f|).

    The pairing is one-to-one: the assignment that minimises the total distance between
    real frequencies and the real parts of the complex ones (Hungarian method), so that two
    modes never share one complex eigenvalue. A mode left without one (fewer eigenvalues
    than modes) keeps None for both."""
    import math
    from dataclasses import replace

    from scipy.constants import c
    from scipy.optimize import linear_sum_assignment

    found = c * np.sqrt(np.asarray(k0_squared, dtype=complex)) / (2 * math.pi)
    real = np.array([m.frequency_hz for m in modes])
    rows, cols = linear_sum_assignment(np.abs(real[:, None] - found.real[None, :]))
    partner = dict(zip(rows.tolist(), cols.tolist()))
    out = []
    for i, mode in enumerate(modes):
        if i not in partner:
            out.append(replace(mode, complex_frequency_hz=None, q_dielectric_complex=None))
            continue
        f = complex(found[partner[i]])
        q = f.real / (2 * abs(f.imag)) if f.imag != 0 else math.inf
        out.append(replace(mode, complex_frequency_hz=f, q_dielectric_complex=float(q)))
    return out
