"""The eigen layer behind one protocol: problems as matrices, backends registered by name.

References: the closed-form box resonances (Pozar, Microwave Engineering, 4th ed., §6.3, from
memory); for a uniformly filled box with eps_r = eps' (1 - j tan δ) the pencil's mass matrix is
exactly (1 - j tan δ) times the lossless one, so every eigenvalue is k0²/(1 - j tan δ) and
ω = ω0 / sqrt(1 - j tan δ), Q = Re ω / (2 Im ω) (common practice: Pozar §6.1's definition of
Q with the complex frequency).
"""

import math

import numpy as np
import pytest

from femcav.analytic.box import lowest_box_frequencies
from femcav.eigen import backends
from femcav.eigen.factorization import get_factorizer
from femcav.eigen.interface import EigenPairs, EigenRequest
from femcav.eigen.problem import EigenProblem
from femcav.fem.assembly import assemble
from femcav.fem.auxiliary import auxiliary_space
from femcav.fem.gradient import kernel_basis
from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import frequency_to_k0_squared

A, B, D = 0.02286, 0.01016, 0.030


@pytest.fixture(scope="module")
def box_problem():
    mesh = build_part("box", width=A, height=B, length=D, mesh_size=0.004)
    space = build_space(make_model(mesh, {"inside": Material()}, {}), "E", 1)
    K, M = assemble(space)
    G = kernel_basis(space)
    scale = (math.pi / max(A, B, D)) ** 2
    return space, EigenProblem(K, M, G, lowest_scale=scale,
                               auxiliary=lambda tau: auxiliary_space(space, tau))


def test_built_in_backends_are_registered():
    assert {"direct", "iterative", "arnoldi"} <= set(backends.names())


def test_direct_and_iterative_agree_with_the_closed_form(box_problem):
    _, problem = box_problem
    request = EigenRequest(4)
    found = {}
    for name in ("direct", "iterative"):
        setting = backends.setting_for(problem, get_factorizer("auto"))
        found[name] = backends.solve(name, problem, request, setting).values[:4]
    exact = np.array([frequency_to_k0_squared(f) for f in lowest_box_frequencies(A, B, D, 4)])
    assert np.allclose(found["direct"], found["iterative"], rtol=1e-8)
    # 4 mm mesh, order 1: a few per cent in k0² (h² convergence)
    assert np.allclose(found["direct"], exact, rtol=0.06)


def test_a_new_backend_is_one_registration(box_problem):
    _, problem = box_problem
    seen = []

    @backends.register("test-only-dense")
    def dense(problem, request, setting):
        import scipy.linalg as la
        # the kernel deflated by the shared projector, then a dense generalised solve
        values, vectors = la.eigh(problem.K.toarray(), problem.M.toarray())
        physical = np.abs(setting.projector.gradient_part(vectors)).max(axis=0) < 1e-6
        seen.append(request.count)
        return EigenPairs(values=values[physical][:request.count],
                          vectors=vectors[:, physical][:, :request.count])

    try:
        setting = backends.setting_for(problem, get_factorizer("auto"))
        pairs = backends.solve("test-only-dense", problem, EigenRequest(3), setting)
        direct = backends.solve("direct", problem, EigenRequest(3), setting)
    finally:
        backends._BACKENDS.pop("test-only-dense")
    assert seen == [3]
    assert np.allclose(pairs.values, direct.values[:3], rtol=1e-8)
    with pytest.raises(ValueError, match="no eigen backend"):
        backends.solve("test-only-dense", problem, EigenRequest(3), setting)


def test_complex_symmetric_lossy_box_gives_q_and_fields(box_problem):
    _, problem = box_problem
    tan_delta = 1e-3
    lossy = EigenProblem(problem.K.astype(complex), problem.M * (1 - 1j * tan_delta),
                         problem.kernel, lowest_scale=problem.lowest_scale, hermitian=False)
    pairs = backends.solve("arnoldi", lossy, EigenRequest(4),
                           backends.setting_for(lossy, get_factorizer("auto")))
    real = backends.solve("direct", problem, EigenRequest(4),
                          backends.setting_for(problem, get_factorizer("auto")))
    values = pairs.values[:4]
    # every eigenvalue is the lossless one over (1 - j tan δ) ...
    assert np.allclose(values * (1 - 1j * tan_delta), real.values[:4], rtol=1e-8)
    omega = np.sqrt(values)
    q = omega.real / (2 * omega.imag)
    omega_exact = 1 / np.sqrt(1 - 1j * tan_delta)
    assert np.allclose(q, omega_exact.real / (2 * omega_exact.imag), rtol=1e-8)
    assert abs(q[0] * tan_delta - 1) < 1e-6          # Q_d = 1/tan δ to first order
    # ... and comes with its field: a residual at round-off level, free of gradient content
    X = pairs.vectors[:, :4]
    residual = lossy.K @ X - (lossy.M @ X) * values
    assert np.linalg.norm(residual, axis=0).max() < 1e-8 * np.linalg.norm(lossy.K @ X, axis=0).min()


def _gauged(problem, seed=3):
    """The same pencil in a unitary gauge x = D y, D = diag(e^{jθ}) with a random phase per
    DOF: Dᴴ K D y = λ Dᴴ M D y is complex Hermitian with exactly the same spectrum, its
    kernel is Dᴴ range(G) and its nodal transfer Dᴴ Π."""
    import scipy.sparse as sp

    n = problem.size
    D = sp.diags(np.exp(1j * np.random.default_rng(seed).uniform(0, 2 * np.pi, n)))
    Dh = D.conj()
    aux = problem.auxiliary

    def gauged_auxiliary(tau):
        real = aux(tau)
        return type(real)(interpolation=(Dh @ real.interpolation).tocsr(), points=real.points,
                          nodal_matrix=real.nodal_matrix,
                          smoothing_degree=real.smoothing_degree)

    return D, EigenProblem((Dh @ problem.K @ D).tocsr(), (Dh @ problem.M @ D).tocsr(),
                           (Dh @ problem.kernel).tocsr(), lowest_scale=problem.lowest_scale,
                           auxiliary=gauged_auxiliary)


@pytest.mark.parametrize("name", ["iterative", "direct"])
def test_complex_hermitian_problem_gives_the_real_spectrum(box_problem, name):
    _, problem = box_problem
    D, gauged = _gauged(problem)
    assert gauged.dtype == np.complex128
    request = EigenRequest(4)
    real = backends.solve(name, problem, request,
                          backends.setting_for(problem, get_factorizer("auto")))
    found = backends.solve(name, gauged, request,
                           backends.setting_for(gauged, get_factorizer("auto")))
    assert np.isrealobj(found.values)
    assert np.allclose(found.values[:4], real.values[:4], rtol=1e-9)
    if name == "iterative":   # the gauge changes nothing the iteration sees
        assert abs(found.stats.iterations - real.stats.iterations) <= 1
    # the vectors are the real modes in the new gauge: |<D y, x>_M| = 1 for a simple mode
    y = D @ found.vectors[:, 0]
    x = real.vectors[:, 0]
    assert abs(abs(np.vdot(y, problem.M @ x)) - 1) < 1e-6
