"""Inner products that serve real symmetric and complex Hermitian pencils alike.

With complex vectors the M-inner product is xᴴ M y; for real ones ᴴ is ᵀ, and these helpers
then avoid the copy that numpy's conj() makes of a real array (they sit on hot paths of the
block iterations).
"""

from __future__ import annotations

import numpy as np


def ct(a):
    """The conjugate transpose of a dense or sparse matrix (the transpose when real)."""
    return a.T.conj() if np.iscomplexobj(a) else a.T


def column_dots(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """xᵢᴴ yᵢ for each column i (real part: for y = M x with Hermitian M it is real)."""
    if np.iscomplexobj(x):
        return np.einsum("ij,ij->j", x.conj(), y).real
    return np.einsum("ij,ij->j", x, y)


def hermitian_part(a: np.ndarray) -> np.ndarray:
    return (a + ct(a)) / 2
