"""Material coefficients of the forms: a scalar or a 3x3 tensor per quadrature point, real or
complex.

A coefficient array has shape (n_elements, n_points) for an isotropic model and
(n_elements, n_points, 3, 3) when any region is anisotropic (isotropic regions then hold
c I). Complex values come from lossy or absorbing materials (ε_r (1 - j tan δ)) and from
gyrotropic tensors. The forms are bilinear with real basis functions, so the assembled
matrix is Hermitian when every coefficient is Hermitian (real scalars, real symmetric or
complex Hermitian tensors) and complex symmetric when every coefficient is symmetric (complex
scalars, complex symmetric tensors); ``pencil_kind`` tells which solver family applies.

Post-processing reads the coefficients through the few functions here (``quadratic``,
``apply``, ``isotropic_part``), so that energies and fields are right for tensors and complex
fields alike.
"""

from __future__ import annotations

import numpy as np

HERMITIAN, SYMMETRIC, GENERAL = "hermitian", "complex symmetric", "general"


def is_tensor(c: np.ndarray) -> bool:
    return np.ndim(c) == 4


def as_tensor(c: np.ndarray) -> np.ndarray:
    """Scalars c -> c I (shape (..., 3, 3)); tensors unchanged."""
    if is_tensor(c):
        return c
    return np.asarray(c)[..., None, None] * np.eye(3)


def inverse(c: np.ndarray) -> np.ndarray:
    """1/c for scalars, the matrix inverse per point for tensors."""
    return np.linalg.inv(c) if is_tensor(c) else 1.0 / c


def isotropic_part(c: np.ndarray) -> np.ndarray:
    """The real scalar that stands for c where one number per point is enough (a refractive
    index for mesh resolution, a weight for matching modes, a bound of the spectrum): the
    real part of c, or of its trace / 3."""
    if is_tensor(c):
        return np.real(np.trace(c, axis1=-2, axis2=-1)) / 3
    return np.real(c)


def apply(c: np.ndarray, field: np.ndarray) -> np.ndarray:
    """c u at every point; ``field`` is (3, n_elements, n_points)."""
    if is_tensor(c):
        return np.einsum("eqij,jeq->ieq", c, field)
    return c[None] * field


def quadratic(c: np.ndarray, field: np.ndarray) -> np.ndarray:
    """Re(ū · c u) at every point, (n_elements, n_points): an energy density (times a
    constant) for fields that may be complex (modes of a lossy or periodic problem)."""
    if is_tensor(c):
        return np.real(np.einsum("ieq,ieq->eq", np.conj(field), apply(c, field)))
    if np.iscomplexobj(field):
        return np.real(c) * np.sum(np.abs(field) ** 2, axis=0)
    return np.real(c) * np.sum(field ** 2, axis=0)


def pencil_kind(*coefficients: np.ndarray) -> str:
    """HERMITIAN, SYMMETRIC or GENERAL for the pencil the coefficients assemble to."""
    if not any(np.iscomplexobj(c) for c in coefficients):
        if all(not is_tensor(c) or _close(c, np.swapaxes(c, -1, -2)) for c in coefficients):
            return HERMITIAN
        return GENERAL
    tensors = [as_tensor(c) for c in coefficients]
    if all(_close(t, np.conj(np.swapaxes(t, -1, -2))) for t in tensors):
        return HERMITIAN
    if all(_close(t, np.swapaxes(t, -1, -2)) for t in tensors):
        return SYMMETRIC
    return GENERAL


def _close(a: np.ndarray, b: np.ndarray) -> bool:
    scale = max(float(np.max(np.abs(a))), np.finfo(float).tiny)
    return bool(np.max(np.abs(a - b)) <= 1e-12 * scale)
