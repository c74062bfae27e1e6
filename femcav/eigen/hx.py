"""Auxiliary-space (Hiptmair-Xu) preconditioner for A = K + τ M on the free edge DOFs.

After R. Hiptmair and J. Xu, "Nodal auxiliary space preconditioning in H(curl) and H(div)
spaces", SIAM J. Numer. Anal. 45(6) (2007) 2483-2509: a field splits into a high-frequency
part (a smoother on A handles it), a gradient G p and a nodal vector field Π z, and the two
auxiliary problems are discrete scalar and vector Laplacians in disguise, which algebraic
multigrid solves well. The additive form

    B = S + G V_G Gᵀ + Π V_Π Πᵀ,      V_G ≈ (Gᵀ A G)⁻¹,  V_Π ≈ (Πᵀ A Π)⁻¹,

is symmetric positive definite when S and the V-cycles are, so it preconditions CG and LOBPCG.
The multiplicative form applies the same pieces one after another on the updated residual
in the symmetric order S, G, Π, G, S: symmetric too, and positive definite as long as the
smoother and the V-cycles converge. The hybrid form (the default) smooths multiplicatively
around the two auxiliary corrections taken together on one residual, S, (G + Π), S: still
symmetric, one gradient cycle and two residuals fewer per application. Measured on a box
(CG to 1e-8 on K + τM, order 1, 4.1k / 12k / 34k DOFs, one thread): additive 23 / 23 / 23
iterations, multiplicative 10 / 10 / 10, hybrid 11 / 13 / 13 (multiplicative 10 at 100k and
208k as well); LOBPCG, 10 modes, at 34k DOFs: additive 46 iterations in 4.5 s,
multiplicative 25 in 2.8 s, hybrid 26 in 2.7 s; at 200k (benchmarks/scale.py's box):
multiplicative 29 iterations in 32.3 s, hybrid 28 in 30.8 s. The coefficients (ε, μ) live
inside K and M, so nothing here depends on them.

The nodal problem is by default the Galerkin product Πᵀ A Π, one AMG over the three
components of each vertex, with the constant fields and the six curl-free linear fields
∇(x_i x_j) as near-null space (Πᵀ K Π is a curl-curl operator on nodal fields, in which
gradients have small energy; before the wall vertices were dropped from Π, see
hx_preconditioner, CG at 34k DOFs needed 19 iterations with the constants alone, 15 with
the linear fields as well, 9 with an exact nodal solve). The alternative "laplacian" is
Hiptmair and Xu's own auxiliary problem, a vector Laplacian with the element means of the
coefficients: cheaper to set up (5.2 s against 8.7 s at 208k DOFs) but 16 CG iterations
instead of 10, and 35 LOBPCG iterations (8.4 s) instead of 28 (7.7 s) at 34k DOFs.

Each V_• is one V-cycle of smoothed aggregation AMG (P. Vaněk, J. Mandel and M. Brezina,
"Algebraic multigrid by smoothed aggregation for second and fourth order elliptic problems",
Computing 56 (1996) 179-196). pyamg builds the hierarchy (aggregates, prolongators, coarse
matrices); the cycle itself is ours and runs on a block of vectors at once, with Chebyshev
polynomial smoothing in the Jacobi-scaled matrix (a fixed polynomial, so the cycle is a
symmetric linear operator; the same polynomial smooths the edge matrix as S). The Chebyshev
recurrence is the classical one, e.g. Y. Saad, Iterative Methods for Sparse Linear Systems,
2nd ed., SIAM 2003, §12.1 (from memory).

Orders 2 and 3 use the same construction with the discrete gradient of the Lagrange space of
the same order and Π into the order-k DOFs (femcav.fem.interpolation): the local high-order
gradients are then inside G's range and the order-k smoother handles the rest. It works, and
well at order 2 (CG to 1e-8: 15 / 17 iterations at 3.2k / 25k DOFs), poorly at order 3 (83 / 70
at 3.4k / 10k DOFs with a degree-3 smoother, 44 at 10k with degree 6, even with an exact
nodal solve): the point smoother is weak on the order-3 face and interior DOFs. A p-level
(order-1 HX reached through NED_1 ⊂ NED_k) or a block smoother would likely do better.

Applying the whole preconditioner in float32 (set up in float64) was tried and dropped: box,
200k DOFs, 10 modes, one thread, 29 LOBPCG iterations either way, 38.8 s against 42.2 s of
eigen solve, within run-to-run noise; the nodal level (Πᵀ A Π, 94 entries a row) did not get
faster at all.
"""

from __future__ import annotations

import time

import numpy as np
import scipy.linalg as la
import scipy.sparse as sp

from .hermitian import ct
from .problem import AuxiliarySpace

CYCLES = ("additive", "multiplicative", "hybrid")
CHEBYSHEV_DEGREE = 2
CHEBYSHEV_LOWER = 1.0 / 30.0    # fraction of the spectral radius the smoother damps down to
CHEBYSHEV_UPPER = 1.1           # safety above the estimated spectral radius
MAX_COARSE = 400                # the coarsest AMG level is solved by dense Cholesky


class ChebyshevSmoother:
    """x = p(D⁻¹A) D⁻¹ b: ``degree`` steps of Chebyshev iteration for D⁻¹A from x = 0 on
    [lower ρ, upper ρ], ρ the spectral radius of D⁻¹A (D = diag A)."""

    def __init__(self, A, degree: int = CHEBYSHEV_DEGREE):
        from pyamg.util.linalg import approximate_spectral_radius

        self.A = A.tocsr()
        diag = self.A.diagonal().real     # real for a Hermitian A
        self.dinv = 1.0 / np.where(diag > 0, diag, 1.0)
        scaled = sp.diags(self.dinv) @ self.A
        # a fixed start vector: pyamg's default is random, which made the preconditioner
        # (and iteration counts) differ from run to run
        start = np.random.default_rng(2024).random(self.A.shape[0])
        rho = approximate_spectral_radius(scaled, maxiter=20, restart=0, symmetric=False,
                                          initial_guess=start)
        upper, lower = CHEBYSHEV_UPPER * rho, CHEBYSHEV_LOWER * rho
        self.theta, self.delta = (upper + lower) / 2, (upper - lower) / 2
        self.degree = degree

    def __call__(self, b: np.ndarray) -> np.ndarray:
        dinv = self.dinv if b.ndim == 1 else self.dinv[:, None]
        sigma = self.theta / self.delta
        rho_old = 1.0 / sigma
        r = dinv * b
        d = r / self.theta
        x = d.copy()
        for _ in range(self.degree - 1):   # in place: these blocks are n x m
            Ad = self.A @ d
            Ad *= dinv
            r -= Ad
            rho = 1.0 / (2.0 * sigma - rho_old)
            d *= rho * rho_old
            r_scaled = np.multiply(r, 2.0 * rho / self.delta, out=Ad)
            d += r_scaled
            x += d
            rho_old = rho
        return x


class BlockVCycle:
    """One V-cycle of smoothed aggregation for the SPD matrix A, on vectors or blocks."""

    def __init__(self, A, near_null: np.ndarray | None = None, blocksize: int = 1,
                 degree: int = CHEBYSHEV_DEGREE):
        import pyamg

        A = sp.csr_matrix(A)
        if blocksize > 1:
            A = A.tobsr(blocksize=(blocksize, blocksize))
        # pyamg estimates spectral radii from numpy's global random generator: seed it for
        # the setup, so that the preconditioner is the same from run to run, and restore it.
        state = np.random.get_state()
        np.random.seed(2024)
        try:
            hierarchy = pyamg.smoothed_aggregation_solver(
                A, B=near_null, max_coarse=MAX_COARSE, max_levels=25, keep=False,
                improve_candidates=None)
        finally:
            np.random.set_state(state)
        levels = hierarchy.levels
        self.A = [lvl.A.tocsr() for lvl in levels]
        self.P = [lvl.P.tocsr() for lvl in levels[:-1]]
        self.R = [lvl.R.tocsr() for lvl in levels[:-1]]
        self.smoothers = [ChebyshevSmoother(a, degree) for a in self.A[:-1]]
        coarse = self.A[-1].toarray()
        try:
            self._coarse = ("cholesky", la.cho_factor(coarse))
        except la.LinAlgError:   # round-off made the coarsest matrix semidefinite
            self._coarse = ("pinv", np.linalg.pinv(coarse, hermitian=True))
        self.operator_complexity = sum(a.nnz for a in self.A) / self.A[0].nnz

    @property
    def n_levels(self) -> int:
        return len(self.A)

    def _coarse_solve(self, b):
        kind, data = self._coarse
        return la.cho_solve(data, b) if kind == "cholesky" else data @ b

    def __call__(self, b: np.ndarray, level: int = 0) -> np.ndarray:
        if level == len(self.A) - 1:
            return self._coarse_solve(b)
        A, smooth = self.A[level], self.smoothers[level]
        x = smooth(b)
        x += self.P[level] @ self(self.R[level] @ (b - A @ x), level + 1)
        x += smooth(b - A @ x)
        return x


def _regularised(A):
    """A with unit diagonal where a row is empty (a zero column of the transfer): the entry
    is decoupled, the transfer ignores it, and the matrix becomes definite."""
    A = sp.csr_matrix(A)
    empty = np.flatnonzero(np.diff(A.indptr) == 0) if A.nnz else np.arange(A.shape[0])
    zero_diag = np.flatnonzero(A.diagonal() == 0)
    fix = np.union1d(empty, zero_diag)
    if fix.size:
        A = A + sp.csr_matrix((np.ones(fix.size), (fix, fix)), shape=A.shape)
    return A


class AuxiliarySpacePreconditioner:
    """B ≈ A⁻¹ for A = K + τM (τ > 0) on the free edge DOFs.

    ``G`` (free edge DOFs x free scalar DOFs) and ``Pi`` (free edge DOFs x 3 n, component-
    major over n auxiliary vertices) are the two transfers. The nodal problem is either the Galerkin product
    Πᵀ A Π (``nodal_matrix=None``, one AMG on the coupled 3 x 3 blocks) or a given scalar
    SPD matrix L on the vertices (e.g. ν-weighted Laplacian plus τ ε-weighted mass), applied
    to each component separately, as in Hiptmair and Xu's analysis where the auxiliary
    problem is the vector Laplacian. ``near_null`` (3 n x k, node-major) are the
    near-null fields for the Galerkin nodal AMG (default: the three constants).
    ``cycle`` is "additive", "multiplicative" or "hybrid" (see the module notes).
    Call it on a vector (n,) or a block (n, m).
    """

    def __init__(self, A, G, Pi, *, nodal_matrix=None, near_null=None,
                 cycle: str = "hybrid", smoothing_degree: int = 3):
        if cycle not in CYCLES:
            raise ValueError(f"cycle must be one of {', '.join(CYCLES)}, got {cycle!r}")
        t0 = time.perf_counter()
        self.A = sp.csr_matrix(A)
        self.cycle = cycle
        self.smoother = ChebyshevSmoother(self.A, smoothing_degree)
        self.G = sp.csr_matrix(G)
        self.Gt = ct(self.G).tocsr()
        self.gradient_cycle = (BlockVCycle(_regularised(self.Gt @ (self.A @ self.G)))
                               if self.G.shape[1] else None)
        self.n_vertices = n_v = Pi.shape[1] // 3
        self.componentwise = nodal_matrix is not None
        if self.componentwise:
            self.Pi = sp.csr_matrix(Pi)
            self.nodal_cycle = BlockVCycle(nodal_matrix)
        else:
            # Node-major order lets AMG aggregate the three components of a vertex together,
            # with the three constant fields as the near-null space.
            node_major = np.arange(3 * n_v).reshape(3, n_v).T.ravel()
            self.Pi = sp.csr_matrix(Pi)[:, node_major]
            self.nodal_cycle = BlockVCycle(_regularised(ct(self.Pi) @ (self.A @ self.Pi)),
                                           near_null=(np.tile(np.eye(3), (n_v, 1))
                                                      if near_null is None else near_null),
                                           blocksize=3)
        self.Pit = ct(self.Pi).tocsr()
        self.setup_seconds = time.perf_counter() - t0
        self.applications = 0

    @property
    def shape(self):
        return self.A.shape

    def _gradient(self, r):
        if self.gradient_cycle is None:
            return np.zeros_like(r)
        return self.G @ self.gradient_cycle(self.Gt @ r)

    def _nodal(self, r):
        z = self.Pit @ r
        if self.componentwise:   # (3 n_v, m) -> (n_v, 3 m): the three components side by side
            m = 1 if r.ndim == 1 else r.shape[1]
            side = z.reshape(3, self.n_vertices, m).transpose(1, 0, 2).reshape(self.n_vertices,
                                                                                3 * m)
            z = (self.nodal_cycle(side).reshape(self.n_vertices, 3, m).transpose(1, 0, 2)
                 .reshape(z.shape))
        else:
            z = self.nodal_cycle(z)
        return self.Pi @ z

    def __call__(self, r: np.ndarray) -> np.ndarray:
        self.applications += 1 if r.ndim == 1 else r.shape[1]
        r = np.asarray(r, dtype=np.result_type(r, self.A.dtype, float))
        if self.cycle == "additive":
            return self.smoother(r) + self._gradient(r) + self._nodal(r)
        x = self.smoother(r)
        if self.cycle == "hybrid":
            residual = r - self.A @ x
            x += self._gradient(residual) + self._nodal(residual)
            x += self.smoother(r - self.A @ x)
            return x
        for correct in (self._gradient, self._nodal, self._gradient, self.smoother):
            x += correct(r - self.A @ x)
        return x

    def aslinearoperator(self):
        from scipy.sparse.linalg import LinearOperator
        return LinearOperator(self.A.shape, matvec=self, matmat=self, dtype=self.A.dtype)

    def describe(self) -> str:
        g = self.gradient_cycle
        nodal = "vector Laplacian" if self.componentwise else "Galerkin"
        return (f"HX ({self.cycle}, {nodal} nodal problem): gradient AMG "
                f"{g.n_levels if g else 0} levels, nodal AMG {self.nodal_cycle.n_levels} "
                f"levels, setup {self.setup_seconds:.2f} s")


def hx_preconditioner(A, G, auxiliary: AuxiliarySpace, **options
                      ) -> AuxiliarySpacePreconditioner:
    """The preconditioner of A = K + τM (τ > 0) on the free DOFs, from matrices only: ``G``
    the kernel basis (free DOFs x free scalar DOFs) and ``auxiliary`` the nodal transfer Π,
    its nodes' coordinates and, optionally, a nodal matrix replacing Πᵀ A Π (the
    discretisation builds them: femcav.fem.auxiliary). Other options go to
    AuxiliarySpacePreconditioner."""
    t0 = time.perf_counter()
    options.setdefault("smoothing_degree", auxiliary.smoothing_degree)
    near_null = None if auxiliary.nodal_matrix is not None else linear_fields(auxiliary.points)
    out = AuxiliarySpacePreconditioner(sp.csr_matrix(A), G, auxiliary.interpolation,
                                       nodal_matrix=auxiliary.nodal_matrix,
                                       near_null=near_null, **options)
    out.setup_seconds = time.perf_counter() - t0
    return out


def linear_fields(points):
    """(3 n_vertices, 9), node-major: the constant fields and the gradients of the six
    quadratic monomials (curl-free linear fields), in coordinates centred and scaled."""
    x = points - points.mean(axis=1, keepdims=True)
    x = x / np.abs(x).max()
    n = x.shape[1]
    out = np.zeros((n, 3, 9))
    out[:, :, :3] = np.eye(3)
    col = 3
    for i in range(3):
        for j in range(i, 3):
            out[:, i, col] += x[j]
            out[:, j, col] += x[i]
            col += 1
    return out.reshape(3 * n, 9)
