"""Peak-memory estimates for the eigen backends.

A solve that will not fit is refused before it starts, with the estimate and what to change,
rather than left to the operating system's out-of-memory killer after minutes of work; what
it may use comes from femcav.memory_room.

The direct estimate models the sparse factor of K - σM. SuperLU's L + U non-zeros were
measured on curl-curl matrices with a METIS order (box, order 1: 0.56 M, 3.9 M, 24.4 M at
4.1k, 15k, 56k DOFs; pillbox, order 3: 2.0 M and 13.4 M at 7.1k and 26k DOFs): they grow like
n^1.4 with a factor that rises slowly with the non-zeros per row, and a peak of about four
times the factor's storage (the 293k-DOF order-3 pillbox peaked at 18.9 GB against a modelled
factor of 4.7 GB). PARDISO reports its own need after its analysis phase; its Cholesky
factor held 0.54 times SuperLU's L + U non-zeros on the same matrices.
"""

from __future__ import annotations


FACTOR_EXPONENT = 1.4
BYTES_PER_ENTRY = 12          # a float64 value and an int32 index
SUPERLU_WORKSPACE = 4.0       # measured peak over factor storage
PARDISO_SHARE = 0.54          # PARDISO Cholesky non-zeros over SuperLU L + U


def superlu_factor_entries(n: int, nnz: int) -> float:
    """Modelled non-zeros of L + U (see the module notes for the measurements)."""
    per_row = max(nnz / max(n, 1), 1.0)
    return 5.6 * (per_row / 15.0) ** 0.28 * n ** FACTOR_EXPONENT


def direct_peak_bytes(n: int, nnz: int, krylov_vectors: int, library: str) -> float:
    """Shift-invert Lanczos: the factor, the matrices and the Krylov basis."""
    factor = superlu_factor_entries(n, nnz) * BYTES_PER_ENTRY
    factor *= PARDISO_SHARE * 1.5 if library == "pardiso" else SUPERLU_WORKSPACE
    return factor + 3 * nnz * BYTES_PER_ENTRY + 3 * n * krylov_vectors * 8


def iterative_peak_bytes(n: int, nnz: int, block: int) -> float:
    """Preconditioned LOBPCG: K, M and A = K + τM, the multigrid hierarchies and transfers of
    the auxiliary spaces (about 3 kB per DOF at order 1, measured, growing with the
    non-zeros per row), and about twelve dense n x block arrays. Measured whole-process peak
    at 1M DOFs (box and DR fixture, order 1, 10 modes): 6.0 and 6.1 GB; this gives 5.4 GB."""
    per_row = max(nnz / max(n, 1), 1.0)
    return 3000.0 * n * per_row / 15.0 + 5 * nnz * BYTES_PER_ENTRY + 12 * n * block * 8
