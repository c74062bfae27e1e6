"""The iterative backend: nodal interpolation Π, the Hiptmair-Xu preconditioner and LOBPCG.

References: line integrals of linear fields in closed form; scipy's CG; the direct
shift-invert backend of femcav (an independent solver: ARPACK on a sparse factorisation);
the closed-form box resonances (Pozar, Microwave Engineering, 4th ed., §6.3, from memory).
"""

import math

import numpy as np
import pytest
from scipy.sparse.linalg import cg

from femcav.analytic.box import lowest_box_frequencies
from femcav.eigen import lobpcg, shift_invert
from femcav.eigen.factorization import get_factorizer
from femcav.eigen.hx import hx_preconditioner
from femcav.eigen.interface import EigenRequest
from femcav.eigen.projection import GradientProjector
from femcav.fem.assembly import assemble
from femcav.fem.auxiliary import auxiliary_space
from femcav.fem.gradient import kernel_basis
from femcav.fem.interpolation import nodal_vector_interpolation
from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.post.checks import check_modes
from femcav.solver import frequency_to_k0_squared

A, B, D = 0.02286, 0.01016, 0.030
RNG = np.random.default_rng(7)
LINEAR = RNG.standard_normal((3, 3))
OFFSET = RNG.standard_normal(3)


def box_model(h):
    mesh = build_part("box", width=A, height=B, length=D, mesh_size=h)
    return make_model(mesh, {"inside": Material()}, {})


def loaded_model(h):
    mesh = build_part("loaded_box", width=A, height=B, length=D, mesh_size=h,
                      block_corner=[0.006, 0.0, 0.010], block_size=[0.008, 0.005, 0.010])
    return make_model(mesh, {"air": Material(), "block": Material(eps_r=4.0)}, {})


def discrete_problem(model, order=1):
    """space, K, M, G, projector and the lowest-mode scale, as femcav.solver builds them."""
    space = build_space(model, "E", order)
    K, M = assemble(space)
    G = kernel_basis(space)
    projector = GradientProjector(M, G, get_factorizer("auto"))
    scale = ((math.pi / model.mesh.bounding_size()) ** 2
             / (space.mass_coef.max() / space.stiffness_coef.min()))
    return space, K, M, G, projector, scale


def _hx(space, K, M, G, scale, nodal="galerkin", **options):
    """The HX preconditioner of K + scale·M from the space's auxiliary matrices."""
    return hx_preconditioner(K + scale * M, G, auxiliary_space(space, scale, nodal=nodal),
                             **options)


def linear_field_at_vertices(space):
    x = space.mesh.p[:, :space.mesh.nvertices]
    return (LINEAR @ x + OFFSET[:, None]).ravel()     # component-major, as Π's columns


# -- Π -----------------------------------------------------------------------------------

def test_order1_interpolation_is_the_line_integral_of_a_linear_field():
    # ∫_0^1 (A (x_a + s t) + c) · t ds = t · (A (x_a + x_b) / 2 + c), t = x_b - x_a: exact
    # midpoint rule for a linear integrand (common practice).
    space = build_space(box_model(0.004), "E", 1)
    dofs = nodal_vector_interpolation(space) @ linear_field_at_vertices(space)
    mesh = space.mesh
    a, b = mesh.edges
    t = mesh.p[:, b] - mesh.p[:, a]
    expected = np.einsum("ie,ie->e", t, LINEAR @ (mesh.p[:, a] + mesh.p[:, b]) / 2
                         + OFFSET[:, None])
    # DOF numbers of the edges through the element-to-edge table (one DOF per edge)
    edge_of_dof = np.empty(space.dofs.N, dtype=np.int64)
    edge_of_dof[space.dofs.element_dofs.ravel()] = mesh.t2e.ravel()
    np.testing.assert_allclose(dofs, expected[edge_of_dof], rtol=0, atol=1e-14)


@pytest.mark.parametrize("order", [2, 3])
def test_higher_order_interpolation_reproduces_a_linear_field(order):
    # P1³ ⊂ NED_k for k >= 2 (Nédélec 1980), so the interpolant of a linear field is the
    # field itself, and the basis evaluated with these DOFs gives it back at every point.
    space = build_space(box_model(0.006), "E", order)
    dofs = nodal_vector_interpolation(space) @ linear_field_at_vertices(space)
    basis = space.basis
    values = np.asarray(basis.interpolate(dofs))                 # (3, n_e, n_q)
    x = basis.mapping.F(basis.X)
    exact = np.einsum("ij,jeq->ieq", LINEAR, x) + OFFSET[:, None, None]
    assert np.abs(values - exact).max() < 1e-11 * np.abs(exact).max()


# -- the preconditioner ------------------------------------------------------------------

@pytest.fixture(scope="module")
def small_box():
    return discrete_problem(box_model(0.004))


def test_preconditioner_is_symmetric_positive_definite_on_blocks(small_box):
    space, K, M, G, _, scale = small_box
    for cycle in ("additive", "multiplicative", "hybrid"):
        precond = _hx(space, K, M, G, scale, cycle=cycle)
        X = RNG.standard_normal((K.shape[0], 4))
        BX = precond(X)
        gram = X.T @ BX
        np.testing.assert_allclose(gram, gram.T, rtol=1e-10, atol=1e-12 * np.abs(gram).max())
        assert np.linalg.eigvalsh((gram + gram.T) / 2).min() > 0
        # a block is the columns one by one
        single = precond(X[:, 2])    # round-off differs between block and vector kernels
        assert np.linalg.norm(BX[:, 2] - single) < 1e-10 * np.linalg.norm(single)


def test_preconditioner_is_the_same_from_run_to_run(small_box):
    # pyamg draws random start vectors for its spectral radius estimates; seeded, two
    # set-ups must give one operator bit for bit.
    space, K, M, G, _, scale = small_box
    X = RNG.standard_normal((K.shape[0], 3))
    first = _hx(space, K, M, G, scale)(X)
    np.random.rand(5)      # the global generator moves on in between
    assert np.array_equal(first, _hx(space, K, M, G, scale)(X))


def test_vector_laplacian_variant_also_preconditions(small_box):
    space, K, M, G, _, scale = small_box
    A_ = (K + scale * M).tocsr()
    b = A_ @ RNG.standard_normal(A_.shape[0])
    precond = _hx(space, K, M, G, scale, nodal="laplacian")
    x, info = cg(A_, b, rtol=1e-8, M=precond.aslinearoperator(), maxiter=200)
    assert info == 0 and np.linalg.norm(b - A_ @ x) <= 1.01e-8 * np.linalg.norm(b)


@pytest.fixture(scope="module")
def mesh_sequence():
    # h = 2 mm and 1.41 mm: 4.1k and 12k DOFs (the brick mesh below goes on to 55k)
    return [discrete_problem(box_model(h)) for h in (0.002, 0.002 / math.sqrt(2))]


def pcg_iterations(problem, cycle):
    space, K, M, G, _, scale = problem
    A_ = (K + scale * M).tocsr()
    b = A_ @ np.random.default_rng(1).standard_normal(A_.shape[0])
    precond = _hx(space, K, M, G, scale, cycle=cycle)
    count = [0]
    x, info = cg(A_, b, rtol=1e-8, M=precond.aslinearoperator(), maxiter=500,
                 callback=lambda _: count.__setitem__(0, count[0] + 1))
    assert info == 0
    assert np.linalg.norm(b - A_ @ x) <= 1.01e-8 * np.linalg.norm(b)
    return count[0]


@pytest.mark.parametrize("cycle, cap", [("additive", 40), ("multiplicative", 20),
                                        ("hybrid", 20)])
def test_pcg_iterations_nearly_independent_of_the_mesh(mesh_sequence, cycle, cap):
    # Mesh independence of HX preconditioning is the theorem of Hiptmair and Xu (2007);
    # 50 % growth is our bar. The caps are our own measurements (23 additive and 10
    # multiplicative on 2, 1.41 and 1 mm meshes, hybrid 11 / 13 / 13) with room to spare.
    counts = [pcg_iterations(problem, cycle) for problem in mesh_sequence]
    print(f"PCG iterations ({cycle}):", counts)
    assert counts[-1] < 1.5 * counts[0], counts
    assert max(counts) < cap, counts


def brick_box_model(n):
    """The box cut into bricks of six tetrahedra, about n along its length (no gmsh: a
    large mesh in a fraction of a second)."""
    from skfem import MeshTet

    from femcav.geometry.mesh import TaggedMesh

    counts = [max(2, round(n * side / D)) for side in (A, B, D)]
    mesh = MeshTet.init_tensor(*(np.linspace(0, side, k + 1) for side, k in zip((A, B, D), counts)))
    tagged = TaggedMesh(points=mesh.p.T, tets=mesh.t.T, tet_region=np.ones(mesh.t.shape[1], int),
                        region_names={"inside": 1}, faces=np.zeros((0, 3), int),
                        face_tag=np.zeros(0, int), wall_names={})
    return make_model(tagged, {"inside": Material()}, {})


def test_hybrid_pcg_iterations_flat_from_4k_to_55k_dofs(mesh_sequence):
    # The fast form of the 100k check below: 13 times the DOFs of the coarsest mesh above,
    # on a brick mesh (measured 14 iterations there, 11 on the 4.1k mesh).
    coarse = pcg_iterations(mesh_sequence[0], "hybrid")
    problem = discrete_problem(brick_box_model(32))
    assert problem[1].shape[0] > 50_000
    fine = pcg_iterations(problem, "hybrid")
    assert fine < 1.5 * coarse and fine < 20, (coarse, fine)


@pytest.mark.slow
def test_pcg_iterations_at_100k_dofs():
    # h = 2 mm ... 0.7 mm (4.1k to 100k DOFs), three refinements
    coarse, fine = (pcg_iterations(discrete_problem(box_model(h)), "hybrid")
                    for h in (0.002, 0.0007))
    assert fine < 1.5 * coarse, (coarse, fine)


# -- LOBPCG ------------------------------------------------------------------------------

def both_backends(problem, count=10):
    space, K, M, G, projector, scale = problem
    request = EigenRequest(count)
    precond = _hx(space, K, M, G, scale)
    iterative = lobpcg.solve(K, M, projector, request, precond, lowest_scale=scale)
    direct = shift_invert.solve(K, M, projector, request, get_factorizer("auto"),
                                lowest_scale=scale)
    return iterative, direct


def assert_same_modes(problem, iterative, direct, count=10):
    _, K, M, _, projector, _ = problem
    assert iterative.stats.converged
    assert iterative.values.size == count
    np.testing.assert_allclose(iterative.values, direct.values[:count], rtol=1e-8)
    checks = check_modes(K, M, projector, iterative.values, iterative.vectors)
    assert all(c.passed for c in checks), [c.failures() for c in checks]
    assert max(c.residual for c in checks) < 2e-9
    assert np.all(np.diff(iterative.values) >= 0)
    np.testing.assert_allclose(np.einsum("ij,ij->j", iterative.vectors, M @ iterative.vectors),
                               1.0, rtol=1e-12)


@pytest.fixture(scope="module")
def box_solution():
    problem = discrete_problem(box_model(0.002))
    return problem, *both_backends(problem)


def test_lobpcg_matches_shift_invert_on_a_box(box_solution):
    problem, iterative, direct = box_solution
    assert_same_modes(problem, iterative, direct)
    for key in ("iterations", "preconditioner_setup_seconds", "iteration_seconds",
                "block_size"):
        assert getattr(iterative.stats, key) is not None


def test_lobpcg_box_modes_against_closed_form(box_solution):
    # tests/test_box.py allows 2e-3 at h = 1 mm; the eigenvalue error of lowest-order edge
    # elements is O(h²) (P. Monk, Finite Element Methods for Maxwell's Equations, Oxford
    # 2003, ch. 7, from memory), so at h = 2 mm we allow four times that.
    _, iterative, _ = box_solution
    computed = np.sqrt(iterative.values)
    reference = np.sqrt([frequency_to_k0_squared(f) for f in lowest_box_frequencies(A, B, D, 10)])
    assert np.max(np.abs(computed / reference - 1)) < 8e-3


def test_lobpcg_matches_shift_invert_with_a_dielectric_block():
    problem = discrete_problem(loaded_model(0.003))
    iterative, direct = both_backends(problem)
    assert_same_modes(problem, iterative, direct)


@pytest.mark.parametrize("order, h", [(2, 0.004), (3, 0.006)])
def test_lobpcg_matches_shift_invert_at_higher_order(order, h):
    problem = discrete_problem(box_model(h), order=order)
    iterative, direct = both_backends(problem)
    assert_same_modes(problem, iterative, direct)


def test_lobpcg_matches_shift_invert_on_a_curved_mesh():
    # Quadratic tetrahedra: Π uses the vertices' affine map only (a preconditioner needs no
    # more); the modes must still come out as the direct backend's.
    mesh = build_part("pillbox", radius=0.01, length=0.015, mesh_size=0.004, curved=True)
    assert mesh.tets10 is not None
    problem = discrete_problem(make_model(mesh, {"inside": Material()}, {}), order=2)
    iterative, direct = both_backends(problem, count=6)
    assert_same_modes(problem, iterative, direct, count=6)


def test_lobpcg_returns_a_static_field_with_the_modes(tmp_path):
    # A shorted coax in the H form: the field circling the rod is curl-free but no gradient
    # (see tests/test_static_fields.py); it comes back as an extra pair at about zero, so
    # that the solver can drop it, and the modes still agree with the direct backend.
    from conftest import box_with_rod

    from femcav.geometry import read_mesh

    size = (0.012, 0.012, 0.040)
    path = box_with_rod(tmp_path / "coax.msh", size, rod_radius=0.002, mesh_size=0.002)
    model = make_model(read_mesh(path), {"gap": Material()}, {})
    space = build_space(model, "H", 1)
    K, M = assemble(space)
    G = kernel_basis(space)
    projector = GradientProjector(M, G, get_factorizer("auto"))
    scale = (math.pi / model.mesh.bounding_size()) ** 2
    request = EigenRequest(2)
    pairs = lobpcg.solve(K, M, projector, request, _hx(space, K, M, G, scale),
                         lowest_scale=scale)
    direct = shift_invert.solve(K, M, projector, request, get_factorizer("auto"),
                                lowest_scale=scale)
    assert pairs.stats.converged and pairs.values.size == 3
    assert abs(pairs.values[0]) < 1e-6 * scale
    np.testing.assert_allclose(pairs.values[1:], direct.values[1:3], rtol=1e-8)


def test_lobpcg_refuses_a_target(small_box):
    _, K, M, _, projector, scale = small_box
    with pytest.raises(ValueError, match="lowest modes only"):
        lobpcg.solve(K, M, projector, EigenRequest(3, target=1e5), lambda r: r,
                     lowest_scale=scale)


def test_lobpcg_reports_progress(small_box):
    space, K, M, G, projector, scale = small_box
    lines = []

    class Recorder:
        def step(self, message):
            lines.append(message)

    precond = _hx(space, K, M, G, scale)
    pairs = lobpcg.solve(K, M, projector, EigenRequest(3), precond, lowest_scale=scale,
                         progress=Recorder())
    assert pairs.stats.converged
    assert lines and "converged after" in lines[-1]
