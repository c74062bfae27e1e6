"""The sparse direct factorisations behind shift-invert: SuperLU (always) and MKL PARDISO
(the optional extra). Linear solves are checked against scipy's dense solver; eigen solves
against each other and the box closed form (Pozar, Microwave Engineering, 4th ed., §6.3,
section number from memory)."""

import numpy as np
import pytest
import scipy.sparse as sp

from femcav.analytic.box import lowest_box_frequencies
from femcav.eigen import pardiso as pardiso_module
from femcav.eigen.factorization import describe, get_factorizer
from femcav.errors import InputError
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import solve_model

needs_pardiso = pytest.mark.skipif(not pardiso_module.available(),
                                   reason="MKL PARDISO not installed (pip install 'femcav[fast]')")


def _laplacian_like(n: int, shift: float) -> sp.csr_matrix:
    """A sparse symmetric matrix: 3D seven-point Laplacian minus shift * I."""
    m = round(n ** (1 / 3))
    one = sp.diags([-np.ones(m - 1), 2 * np.ones(m), -np.ones(m - 1)], [-1, 0, 1])
    eye = sp.identity(m)
    lap = (sp.kron(sp.kron(one, eye), eye) + sp.kron(sp.kron(eye, one), eye)
           + sp.kron(sp.kron(eye, eye), one))
    return (lap - shift * sp.identity(m**3)).tocsr()


@pytest.mark.parametrize("name", ["superlu", pytest.param("pardiso", marks=needs_pardiso)])
@pytest.mark.parametrize("shift, definite", [(-0.5, True), (1.3, False)])
def test_solves_match_dense_solver(name, shift, definite):
    A = _laplacian_like(1000, shift)
    rng = np.random.default_rng(4)
    b = rng.standard_normal((A.shape[0], 3))
    solve = get_factorizer(name)(A.tocsc(), definite=definite)
    want = np.linalg.solve(A.toarray(), b)
    assert np.abs(solve(b) - want).max() < 1e-9 * np.abs(want).max()
    assert np.abs(solve(b[:, 0]) - want[:, 0]).max() < 1e-9 * np.abs(want).max()


@needs_pardiso
def test_pardiso_cholesky_falls_back_on_an_indefinite_matrix():
    A = _laplacian_like(512, 1.3)        # indefinite, though "definite" was promised
    b = np.ones(A.shape[0])
    x = get_factorizer("pardiso")(A, definite=True)(b)
    assert np.linalg.norm(A @ x - b) < 1e-9 * np.linalg.norm(b)


def test_unknown_factorisation_is_an_input_error():
    with pytest.raises(InputError, match="allowed: auto, superlu, pardiso"):
        get_factorizer("cholesky")
    assert describe("superlu") == "SuperLU"


@pytest.fixture(scope="module")
def box_model():
    mesh = build_part("box", width=0.02286, height=0.01016, length=0.030, mesh_size=0.003)
    return make_model(mesh, {"inside": Material()}, {})


@needs_pardiso
@pytest.mark.parametrize("near_hz", [None, 16e9])
def test_backends_give_the_same_modes(box_model, near_hz):
    count = 10 if near_hz is None else 6
    results = [solve_model(box_model, modes=count, near_hz=near_hz, order=2, factorization=name)
               for name in ("superlu", "pardiso")]
    a, b = (np.array([m.frequency_hz for m in r.modes]) for r in results)
    assert np.abs(a / b - 1).max() < 1e-8
    assert all(r.passed for r in results)
    if near_hz is None:
        reference = np.array(lowest_box_frequencies(0.02286, 0.01016, 0.030, 10))
        assert np.abs(b / reference - 1).max() < 2e-3


@needs_pardiso
def test_pardiso_with_the_complex_check():
    # The lossy check's complex matrices go to SuperLU. A cavity filled with one lossy
    # dielectric has Q_d = 1 / tan δ (Pozar, Microwave Engineering, 4th ed., §6.1, from memory).
    mesh = build_part("box", width=0.02286, height=0.01016, length=0.030, mesh_size=0.004)
    model = make_model(mesh, {"inside": Material(eps_r=2.0, tan_delta=1e-3)}, {})
    result = solve_model(model, modes=2, complex_check=True, factorization="pardiso")
    assert all(m.q_dielectric_complex == pytest.approx(1000, rel=1e-3) for m in result.modes)
