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
