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

from ..fem.gradient import GradientProjector


def complex_eigenvalues(K, M, G, factorize, *, shift: float, count: int) -> np.ndarray:
    """``count`` complex k0² nearest the real ``shift`` in the shift-invert sense."""
    n = K.shape[0]
    projector = GradientProjector(M, G, factorize)
    solve_shifted = factorize((K - shift * M).tocsc())
    operator = LinearOperator((n, n), dtype=complex,
                              matvec=lambda v: projector.remove(solve_shifted(M @ v)))
    start = projector.remove(np.random.default_rng(12345).standard_normal(n).astype(complex))
    nu = eigs(operator, k=min(count, n - 2), which="LM", v0=start,
              ncv=min(n - 1, max(2 * count + 1, 20)), return_eigenvectors=False)
    nu = nu[np.abs(nu) > 0]
    return shift + 1.0 / nu


def with_complex_frequencies(modes: list, k0_squared: np.ndarray) -> list:
    """Each mode (a dataclass with frequency_hz) given a complex frequency among the complex
    eigenvalues ``k0_squared``, and the Q it implies, Q = Re ω / (2 Im ω).

    The pairing is one-to-one: the assignment that minimises the total distance between
    real frequencies and the real parts of the complex ones (Hungarian method), so that two
    modes never share one complex eigenvalue. A mode left without one (fewer eigenvalues
    than modes) keeps None for both."""
    import math
    from dataclasses import replace

    from scipy.constants import c
    from scipy.optimize import linear_sum_assignment

    omegas = c * np.sqrt(k0_squared)
    real = np.array([2 * math.pi * m.frequency_hz for m in modes])
    rows, cols = linear_sum_assignment(np.abs(real[:, None] - omegas.real[None, :]))
    partner = dict(zip(rows.tolist(), cols.tolist()))
    out = []
    for i, mode in enumerate(modes):
        if i not in partner:
            out.append(replace(mode, complex_frequency_hz=None, q_dielectric_complex=None))
            continue
        w = omegas[partner[i]]
        q = w.real / (2 * abs(w.imag)) if w.imag != 0 else math.inf
        out.append(replace(mode, complex_frequency_hz=float(w.real / (2 * math.pi)),
                           q_dielectric_complex=float(q)))
    return out
