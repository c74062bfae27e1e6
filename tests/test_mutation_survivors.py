"""Tests written for mutants that survived `benchmarks/mutation.py` (see
benchmarks/mutation_survivors.md): each pins a behaviour that a small change to the code left
unnoticed by the rest of the suite. All are fast (no mesh larger than a few hundred
elements)."""

import math

import numpy as np
import pytest
import scipy.sparse as sp

from femcav.case import in_case


# --- fem -------------------------------------------------------------------------------------

def test_space_defaults_and_refusals():
    """Order 1 is the default, with one DOF per mesh edge (Nédélec 1980: the lowest-order
    edge element); a form or order outside the lists is refused on its key."""
    from femcav.errors import InputError
    from femcav.fem.space import build_space
    from test_gradient import skewed_model

    model = skewed_model()
    space = build_space(model)
    assert space.order == 1 and space.form == "E"
    assert space.dofs.N == space.mesh.edges.shape[1]
    with pytest.raises(InputError) as refused:
        build_space(model, "X", 1)
    # the core names the request parameter; the case layer names its key (issue 18)
    assert (refused.value.option, refused.value.message) == (
        "form", "unknown field form 'X'; allowed: E, H")
    assert in_case(refused.value, "c.toml").field == "solve.form"
    with pytest.raises(InputError) as refused:
        build_space(model, "E", 4)
    assert (refused.value.option, refused.value.message) == (
        "order", "element order must be one of 1, 2, 3, got 4")
    assert str(in_case(refused.value, "c.toml")).startswith("c.toml: solve.order: ")


def test_mass_matrix_against_scikit_fem_and_grounding():
    """The H form of a part with PEC walls only has no essential wall: every edge DOF is free,
    M is scikit-fem's own ∫ u · v, and one node of the (connected) mesh is grounded, which
    leaves G with full column rank (the kernel of the gradient of a connected mesh is the
    constants: common practice)."""
    from skfem import BilinearForm, asm
    from skfem.helpers import dot

    from femcav.fem.assembly import assemble_mass
    from femcav.fem.gradient import discrete_gradient
    from femcav.fem.space import build_space
    from test_gradient import skewed_model

    space = build_space(skewed_model(), "H", 1)
    assert space.constraint.size == space.dofs.N
    M = assemble_mass(space, space.mass_coef)
    reference = asm(BilinearForm(lambda u, v, w: dot(u, v)), space.basis)
    assert abs(M - reference).max() < 1e-12 * abs(reference).max()
    assert space.scalar_constraint.size == space.scalar_dofs.N - 1
    G = (discrete_gradient(space)[space.constraint.kept][:, space.scalar_constraint.kept]
         .toarray())
    assert np.linalg.matrix_rank(G) == G.shape[1]


@pytest.mark.parametrize("order", [1, 2, 3])
def test_edge_dof_locations_lie_inside_their_edges(order):
    """The k DOF locations of each reference edge are distinct points strictly between its
    two vertices."""
    from skfem.refdom import RefTet

    from femcav.fem.nedelec import VERTICES, ElementTetNedelec

    element = ElementTetNedelec(order)
    for e, (a, b) in enumerate(RefTet.edges):
        points = element.doflocs[e * order:(e + 1) * order]
        t = (points - VERTICES[a]) @ (VERTICES[b] - VERTICES[a]) / np.sum(
            (VERTICES[b] - VERTICES[a]) ** 2)
        on_edge = VERTICES[a] + np.outer(t, VERTICES[b] - VERTICES[a])
        assert np.allclose(points, on_edge) and np.all((t > 0) & (t < 1))
        assert np.unique(np.round(t, 12)).size == order


# --- eigen -----------------------------------------------------------------------------------

def test_library_names_what_each_factoriser_uses():
    """`library` says which library a factoriser name resolves to for real matrices: the two
    explicit names are themselves whatever is installed, "auto" is PARDISO only with MKL."""
    from femcav.eigen.factorization import library
    from femcav.eigen.pardiso import available

    assert library("superlu") == "superlu"
    assert library("pardiso") == "pardiso"
    assert library("auto") == ("pardiso" if available() else "superlu")


def test_v_cycle_hierarchy_matches_pyamg_and_converges():
    """The V-cycle's operator complexity is pyamg's own for the same hierarchy (sum of the
    levels' non-zeros over the finest's), and the cycle used as a stationary iteration on the
    2D Poisson matrix reduces the error by a large factor per cycle (smoothed aggregation on
    Poisson: common practice; pyamg's gallery matrix as the problem)."""
    import pyamg
    from pyamg.gallery import poisson

    from femcav.eigen.hx import MAX_COARSE, BlockVCycle

    A = poisson((60, 60), format="csr")
    cycle = BlockVCycle(A)
    state = np.random.get_state()
    np.random.seed(2024)
    try:
        reference = pyamg.smoothed_aggregation_solver(A, max_coarse=MAX_COARSE, max_levels=25,
                                                      keep=False, improve_candidates=None)
    finally:
        np.random.set_state(state)
    assert cycle.n_levels == len(reference.levels) >= 2
    assert cycle.operator_complexity == pytest.approx(reference.operator_complexity(), rel=1e-12)

    from scipy.sparse.linalg import LinearOperator, cg

    b = np.random.default_rng(3).standard_normal(A.shape[0])
    counts = {}
    for name, preconditioner in (("none", None),
                                 ("v-cycle", LinearOperator(A.shape, matvec=cycle))):
        steps = []
        x, info = cg(A, b, M=preconditioner, rtol=1e-8, maxiter=2000,
                     callback=lambda xk: steps.append(1))
        assert info == 0 and np.linalg.norm(A @ x - b) <= 1e-7 * np.linalg.norm(b)
        counts[name] = len(steps)
    assert counts["v-cycle"] <= 25 and counts["none"] >= 4 * counts["v-cycle"], counts


def test_eigen_refusals_name_the_key_or_the_backend():
    """An unknown method is a user mistake on the method parameter; asking LOBPCG for
    modes near a target is a programming mistake that names the backend to use instead."""
    from femcav.eigen import lobpcg
    from femcav.eigen.interface import EigenRequest
    from femcav.eigen.selection import choose
    from femcav.errors import InputError

    with pytest.raises(InputError) as refused:
        choose("fastest", n=1000, nnz=20000, request=EigenRequest(5), order=1,
               library="superlu")
    assert refused.value.option == "method"
    for request, order in ((EigenRequest(5, target=1e4), 1), (EigenRequest(5), 4)):
        with pytest.raises(InputError) as refused:
            choose("iterative", n=1000, nnz=20000, request=request, order=order,
                   library="superlu")
        assert refused.value.option == "method"
        assert in_case(refused.value, None).field == "solve.method"
    with pytest.raises(ValueError, match="^LOBPCG finds the lowest modes only; for modes near "
                                         "a target frequency use the shift-invert backend$"):
        lobpcg.solve(None, None, None, EigenRequest(5, target=1e4), None, lowest_scale=1.0)


def test_iterative_memory_estimate_grows_with_the_block():
    """More vectors in the LOBPCG block can only need more memory (a dense n x block array
    per vector set: common practice)."""
    from femcav.eigen.memory import iterative_peak_bytes

    small, large = (iterative_peak_bytes(100_000, 1_500_000, b) for b in (10, 40))
    assert large - small >= 30 * 100_000 * 8


def test_pardiso_checks_the_diagonal_and_releases_its_memory(monkeypatch):
    """The binding refuses a matrix with an unstored diagonal entry, and frees MKL's
    memory for a factorisation (phase -1, with the matrix size) when it is dropped."""
    import gc

    from femcav.eigen import pardiso

    if not pardiso.available():
        pytest.skip("MKL PARDISO not installed")
    for with_hole in ([[0.0, 1.0], [1.0, 2.0]], [[2.0, 1.0], [1.0, 0.0]], [[0.0, 0.0], [0.0, 0.0]]):
        hole = sp.csr_matrix(np.array(with_hole))
        hole.eliminate_zeros()
        with pytest.raises(ValueError, match="^PARDISO needs every diagonal entry stored$"):
            pardiso.pardiso(hole)
    released = []
    real_release = pardiso._release

    def recording(lib, pt, iparm, n, mtype):   # a finaliser's exceptions are only printed
        try:
            released.append((n, real_release(lib, pt, iparm, n, mtype)))
        except Exception as exc:
            released.append((n, exc))
    monkeypatch.setattr(pardiso, "_release", recording)
    A = sp.diags([4.0, 5.0, 6.0]).tocsr()
    solve = pardiso.pardiso(A, definite=True)
    assert np.allclose(solve(np.array([4.0, 5.0, 6.0])), 1.0)
    del solve
    gc.collect()
    assert released == [(3, 0)]           # PARDISO's error code 0: memory released


# --- post: mode labels on closed-form fields -------------------------------------------------

BOX = (0.02286, 0.01016, 0.030)


def box_fields(points, index, amplitude):
    """E of a rectangular cavity's (m, n, l) standing wave with component amplitudes
    ``amplitude`` (divergence-free when amplitude · (mπ/a, nπ/b, lπ/d) = 0) and H ∝ curl E
    (Pozar, Microwave Engineering, 4th ed., §6.3; from memory)."""
    (a, b, d), (m, n, l) = BOX, index
    km, kn, kl = m * np.pi / a, n * np.pi / b, l * np.pi / d
    assert abs(np.dot(amplitude, (km, kn, kl))) < 1e-9 * np.linalg.norm(amplitude) * (km + kn + kl)
    Ax, Ay, Az = amplitude
    X, Y, Z = km * points[:, 0], kn * points[:, 1], kl * points[:, 2]
    s, c = np.sin, np.cos
    E = np.column_stack([Ax * c(X) * s(Y) * s(Z), Ay * s(X) * c(Y) * s(Z), Az * s(X) * s(Y) * c(Z)])
    H = np.column_stack([(Az * kn - Ay * kl) * s(X) * c(Y) * c(Z),
                         (Ax * kl - Az * km) * c(X) * s(Y) * c(Z),
                         (Ay * km - Ax * kn) * c(X) * c(Y) * s(Z)])
    return E, H


def te_tm_amplitudes(index):
    """Amplitudes of the TE (E_z = 0) and TM (H_z = 0) fields of one index triple, unit size."""
    (a, b, d), (m, n, l) = BOX, index
    km, kn, kl = m * np.pi / a, n * np.pi / b, l * np.pi / d
    te, tm = np.array([kn, -km, 0.0]), np.array([km * kl, kn * kl, -(km**2 + kn**2)])
    return te / np.linalg.norm(te), tm / np.linalg.norm(tm)


@pytest.mark.parametrize("index, te_part, tm_part, label", [
    ((1, 0, 1), 1.0, 0.0, "TE101"),
    ((1, 1, 1), 1.0, 0.0, "TE111"),
    ((1, 1, 1), 0.0, 1.0, "TM111"),
    ((1, 1, 1), 1.0, 1.0, "TE/TM111 (degenerate pair, mixed)"),
    ((2, 1, 0), 0.0, 1.0, "TM210"),
    # each index up to 4, the highest the labeller tries
    ((4, 0, 2), 1.0, 0.0, "TE402"),
    ((2, 4, 1), 0.0, 1.0, "TM241"),
    ((1, 1, 4), 1.0, 0.0, "TE114"),
])
def test_box_label_of_closed_form_fields(index, te_part, tm_part, label):
    from femcav.post.classify import box_label

    rng = np.random.default_rng(5)
    points = rng.random((4000, 3)) * BOX
    te, tm = te_tm_amplitudes(index)
    E, H = box_fields(points, index, te_part * te + tm_part * tm)
    assert box_label(points, np.full(len(points), 1.0 / len(points)), E, H, BOX) == label


def test_azimuthal_order_is_read_where_the_field_is_strong():
    """TM_310 of a pillbox, E_z = J_3(p31 r / a) cos 3φ (Pozar, Microwave Engineering, 4th ed.,
    §6.4; scipy.special for J_3 and its zero), plus noise of 1e-3 of the peak. Near the axis
    J_3 is below the noise, so the order can only be read off the ring at the strong field."""
    from scipy.special import jn_zeros, jv

    from femcav.post.classify import azimuthal_label

    radius, length = 0.010, 0.015
    rng = np.random.default_rng(7)
    r = radius * np.sqrt(rng.random(20000))
    r[0] = 1e-6                                            # the first point on the axis
    phi, z = 2 * np.pi * rng.random(r.size), length * rng.random(r.size)
    points = np.column_stack([r * np.cos(phi), r * np.sin(phi), z])
    ez = jv(3, jn_zeros(3, 1)[0] * r / radius) * np.cos(3 * phi)
    ez += 1e-3 * np.abs(ez).max() * rng.standard_normal(r.size)
    E = np.column_stack([np.zeros_like(ez), np.zeros_like(ez), ez])
    H = np.column_stack([np.sin(3 * phi), np.cos(3 * phi), np.zeros_like(ez)])
    w = np.full(r.size, 1.0 / r.size)
    assert azimuthal_label(points, w, E, H) == "m = 3, TM-like"


def test_mesh_quality_names_the_region_of_the_worst_element():
    """A regular tetrahedron has mean ratio 1; a flattened one 12 (3|V|)^(2/3) / Σ l²
    (A. Liu and B. Joe, BIT 34 (1994) 268-287; from memory), computed here by hand; the
    report names the region holding the worst."""
    from femcav.geometry.mesh import TaggedMesh
    from femcav.post.mesh_quality import mesh_quality

    regular = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], float)
    flat = np.array([[3, 0, 0], [4, 0, 0], [3, 1, 0], [3, 0, 0.1]], float)
    mesh = TaggedMesh(points=np.vstack([regular, flat]), tets=np.array([[0, 1, 2, 3],
                                                                         [4, 5, 6, 7]]),
                      tet_region=np.array([2, 5]), region_names={"air": 2, "puck": 5},
                      faces=np.zeros((0, 3), int), face_tag=np.zeros(0, int), wall_names={})
    volume = 0.1 / 6
    lengths = [np.linalg.norm(flat[i] - flat[j]) ** 2 for i in range(4) for j in range(i)]
    expected = 12 * (3 * volume) ** (2 / 3) / sum(lengths)
    report = mesh_quality(mesh)
    assert report.worst_region == "puck"
    assert report.min_quality == pytest.approx(expected, rel=1e-12)
    assert [r.name for r in report.regions] == ["air", "puck"]
    assert report.regions[0].min_quality == pytest.approx(1.0, rel=1e-12)


def test_mode_checks_of_hand_made_pairs():
    """K = diag(1, 4, 9, 16), M = I: e1 is an exact pair (λ = 1); x = e2 + δ e3 with λ = 4
    has residual ‖Kx − 4x‖ / ‖4x‖ = 5δ / (4 sqrt(1 + δ²)) and M-inner product δ · 0 with e1,
    and a third vector e1 + e2 overlaps both (by hand)."""
    from femcav.post.checks import check_modes

    class NoGradients:
        def gradient_part(self, x):
            return np.zeros_like(x)

    K, M = sp.diags([1.0, 4.0, 9.0, 16.0]).tocsr(), sp.identity(4, format="csr")
    d = 1e-3
    X = np.array([[1.0, 0, 0, 0], [0, 1.0, d, 0], [1.0, 1.0, 0, 0]]).T
    checks = check_modes(K, M, NoGradients(), np.array([1.0, 4.0, 2.5]), X)
    assert checks[0].residual == pytest.approx(0.0, abs=1e-15)
    assert checks[1].residual == pytest.approx(5 * d / (4 * np.sqrt(1 + d * d)), rel=1e-12)
    assert checks[2].residual == pytest.approx(np.sqrt(1.5**2 + 1.5**2) / (2.5 * np.sqrt(2)))
    assert [c.divergence for c in checks] == [0.0, 0.0, 0.0]
    assert checks[0].orthogonality == pytest.approx(1 / np.sqrt(2))
    assert checks[1].orthogonality == pytest.approx(1 / np.sqrt(2 * (1 + d * d)))
    assert [c.passed for c in checks] == [False, False, False]


def test_centroid_permittivity_of_a_graded_region():
    """ε_r = 1 + x/a + 2 y/b + 3 z/d is evaluated at each element's centroid (the mean of its
    four corners)."""
    from femcav.fem.space import build_space
    from femcav.materials import Material
    from femcav.model import Model
    from femcav.post.fields import centroid_materials
    from test_gradient import skewed_model

    base = skewed_model()
    graded = Material(eps_r=lambda x, y, z: 1 + x + 2 * y / 0.5 + 3 * z / 2, mu_r=2.0)
    space = build_space(Model(mesh=base.mesh, materials={"inside": graded}), "E", 1)
    eps, mu = centroid_materials(space)
    c = base.mesh.points[base.mesh.tets].mean(axis=1)
    assert np.allclose(eps, 1 + c[:, 0] + 2 * c[:, 1] / 0.5 + 3 * c[:, 2] / 2, rtol=1e-14)
    assert np.all(mu == 2.0)


def test_extrapolate_orders_the_meshes_and_refuses_a_zero_size():
    """The sequence is reported coarse to fine whatever order it is given in; a mesh size of
    zero is no mesh."""
    from femcav.post.richardson import extrapolate

    f0, C = 10e9, 1e15
    sizes = [1e-3, 2e-3, 1.5e-3]
    x = extrapolate(sizes, [f0 + C * h * h for h in sizes], order_rate=2.0)
    assert x.sizes == (2e-3, 1.5e-3, 1e-3)
    assert x.frequencies_hz == pytest.approx(tuple(f0 + C * h * h for h in x.sizes))
    assert x.finest_hz == pytest.approx(f0 + C * 1e-6)
    with pytest.raises(ValueError, match="positive and distinct"):
        extrapolate([0.0, 1e-3, 2e-3], [f0, f0 + 1e9, f0 + 4e9])


# --- post: error bars from matched frequencies -----------------------------------------------

def test_estimate_matched_on_an_exact_h_squared_sequence():
    """f(h) = f0 + C h² exactly (Richardson's model): the fit recovers f0 and the rate 2; a
    mode missing on the coarsest mesh says so and is still extrapolated from the rest; one
    found on the finest mesh alone gets no bar."""
    from femcav.post.error_estimate import estimate_matched

    sizes = np.array([2.0e-3, 1.6e-3, 1.28e-3, 1.0e-3])
    f0 = np.array([9.0e9, 11.0e9, 13.0e9])
    C = np.array([2e14, -1e14, 3e14])
    exact = [list(f0 + C * h * h) for h in sizes]
    exact[0][1] = None                      # mode 2 not found on the coarsest mesh
    for k in range(3):
        exact[k][2] = None                  # mode 3 only on the finest
    overlaps = [[1.0] * 3 for _ in sizes]
    first, second, third = estimate_matched(sizes, exact, overlaps, order_rate=2.0)
    assert first.extrapolated_hz == pytest.approx(f0[0], rel=1e-7)
    assert first.fitted_rate == pytest.approx(2.0, rel=1e-6) and not first.fallback
    assert first.reason == "" and first.cluster == () and first.cluster_size == 1
    assert second.extrapolated_hz == pytest.approx(f0[1], rel=1e-9)
    assert second.reason.startswith("matched on 3 of 4 meshes")
    assert second.matched_hz[0] is None
    assert abs(second.frequency_hz - f0[1]) <= second.error_estimate_hz
    assert third.error_estimate_hz is None and third.reason == "no coarser mesh has this mode"


# --- study -----------------------------------------------------------------------------------

GOOD_EXTRACT = {"sample": "puck", "empty_frequency": "8 GHz", "empty_q": 5000,
                "loaded_frequency": "7.9 GHz", "loaded_q": 3000}


@pytest.mark.parametrize("change, field, message", [
    ({"sample": "a puck"}, "extract.sample", "must be the name of the sample's region"),
    ({"sample": "other"}, "extract.sample", "give [regions.other] with eps_r (the starting guess)"),
    ({"empty_q": 0}, "extract.empty_q", "must be a number from 1 to 1e+12, got 0"),
    ({"loaded_q": True}, "extract.loaded_q", "must be a number, got true/false"),
    ({"loaded_q": 6000}, "extract.loaded_q", "a lossless-or-lossy sample cannot raise the Q: loaded_q must "
     "be below empty_q (5000)"),
    ({"eps_bracket": [0.5, 10]}, "extract.eps_bracket[0]", "must be a number from 1 to 100000, "
     "got 0.5"),
    ({"eps_bracket": [3, 3]}, "extract.eps_bracket", "the two ends are equal; give two different "
     "numbers, e.g. [1.5, 20]"),
    ({"mode": 0}, "extract.mode", "must be a whole number from 1 to 1000, got 0"),
    ({"tolerance": 0.05}, "extract.tolerance", "must be a number at least 1e-15 and below 0.01, "
     "got 0.05"),
    ({"colour": "red"}, "extract.colour", "unknown key; allowed here: empty_frequency, "
     "empty_q, eps_bracket, loaded_frequency, loaded_q, mode, sample, tolerance"),
    ({"empty_q": None}, "extract", "missing empty_q"),
])
def test_extract_table_refusals_name_the_key(change, field, message):
    """Each mistake is refused with the key path of the offending entry (the project's
    input-error contract, DEVELOPERS.md)."""
    from femcav.errors import InputError
    from femcav.study.extract import parse_extract

    spec = {k: v for k, v in {**GOOD_EXTRACT, **change}.items() if v is not None}
    data = {"regions": {"puck": {"eps_r": 10.0}}, "extract": spec}
    with pytest.raises(InputError) as refused:
        parse_extract(data)
    assert refused.value.field == field
    assert refused.value.message == message
    spec = parse_extract({"regions": {"puck": {}}, "extract": {**GOOD_EXTRACT,
                                                                "eps_bracket": [20, 2]}})
    assert spec.eps_bracket == (2.0, 20.0) and spec.mode == 1 and spec.tolerance == 1e-9
    assert spec.empty_hz == 8e9 and spec.loaded_hz == 7.9e9


def test_mode_chart_shows_lengths_in_millimetres(tmp_path, monkeypatch):
    """A length parameter (SI metres inside) is drawn in mm, with the unit on the axis."""
    import matplotlib.pyplot as plt

    from femcav.study.chart import write_mode_chart

    drawn = []
    monkeypatch.setattr(plt, "close", lambda fig: drawn.append(fig))
    document = {"parameters": [{"parameter": "geometry.post_depth", "unit": "m",
                                "values": [1e-3, 2e-3, 3e-3]}],
                "tracks": [{"track": 1, "frequency_hz": [9.5e9, 9.2e9, None],
                            "q_total": [None, None, None]}]}
    write_mode_chart(document, tmp_path / "chart.png")
    assert (tmp_path / "chart.png").stat().st_size > 0
    (axes,) = drawn[0].axes
    assert axes.get_xlabel() == "geometry.post_depth (mm)"
    (line,) = axes.get_lines()
    assert list(line.get_xdata()) == pytest.approx([1.0, 2.0])
    assert list(line.get_ydata()) == pytest.approx([9.5, 9.2])


# a made-up box with a dielectric block, as a case file's raw tables
LOADED_BOX = {"geometry": {"builder": "loaded_box", "width": "20 mm", "height": "10 mm",
                           "length": "30 mm", "block_corner": ["1 mm", "2 mm", "3 mm"],
                           "block_size": ["4 mm", "5 mm", "6 mm"]},
              "regions": {"block": {"eps_r": 4.0}}}


def test_tune_reference_value_of_a_point_coordinate():
    """`geometry.NAME[i]` starts the tuning from coordinate i of the point, in metres."""
    from pathlib import Path

    from femcav.case import case_from_data
    from femcav.study.tune import TuneSpec, _reference_value

    data = LOADED_BOX
    case = case_from_data(data, Path("made-up.toml"))
    for path, expected in (("geometry.block_corner[1]", 2e-3), ("geometry.block_size[2]", 6e-3),
                           ("geometry.width", 20e-3), ("regions.block.eps_r", 4.0)):
        spec = TuneSpec(path=path, kind="length", bracket=(0.0, 1.0), target_hz=1e9, mode=1,
                        tolerance=1e-6)
        assert _reference_value(data, spec, case) == pytest.approx(expected, rel=1e-12), path


def test_extract_refuses_a_loaded_frequency_outside_the_bracket(tmp_path):
    """A sample would have to be below ε_r = 1.5 or above 2 to give the measured (made-up)
    loaded frequency: refused on the key eps_bracket, nothing written. The loaded frequency
    lies 30 % below the empty one, which a small rod of ε_r ≤ 2 cannot pull (first-order
    perturbation: Δf/f ≈ -(ε_r - 1) × its small energy share; Pozar, Microwave Engineering,
    4th ed., §6.8; from memory)."""
    from femcav.errors import InputError
    from femcav.study.extract import run_extract

    from conftest import box_with_blocks
    from test_extract import FIXTURE, ROD, SIZE   # the rod fixture of the extract tests

    box_with_blocks(tmp_path / "fixture.msh", SIZE, {"block": ROD}, mesh_size=0.006)
    case = tmp_path / "fixture.toml"
    case.write_text(FIXTURE + """
[extract]
sample = "block"
empty_frequency = "8.3 GHz"
empty_q = 7000
loaded_frequency = "5.8 GHz"
loaded_q = 5000
eps_bracket = [1.5, 2]
""")
    with pytest.raises(InputError, match="the loaded frequency is not between them") as refused:
        run_extract(case, out=tmp_path / "out")
    assert refused.value.field == "extract.eps_bracket"
    assert refused.value.source == str(case)
    assert not (tmp_path / "out").exists()


def test_sweep_axis_from_to_points():
    """`from`, `to`, `points` give evenly spaced values, ends included (in SI units); a
    value that is not a table is refused at its key."""
    from femcav.errors import InputError
    from femcav.case_parameters import parse_axis

    axis = parse_axis({"parameter": "geometry.radius", "from": "1 mm", "to": "3 mm",
                       "points": 5}, "sweep")
    assert axis.values == pytest.approx((1e-3, 1.5e-3, 2e-3, 2.5e-3, 3e-3), rel=1e-12)
    with pytest.raises(InputError) as refused:
        parse_axis("geometry.radius", "sweep")
    assert (refused.value.field, refused.value.message) == (
        "sweep", "must be a table, got a string")


# --- fem: the element's degrees of freedom against their textbook definition ----------------

def textbook_moments(k, field):
    """Nédélec's moments of order k (Numer. Math. 35 (1980) 315-341; the list in
    femcav/fem/nedelec.py's notes) on the reference tetrahedron, integrated with quadrature
    rules that are not femcav's: numpy's Gauss-Legendre on the edges, scikit-fem's rules on
    the faces and inside. ``field`` maps points (3, n) to values (..., 3, n); edges and
    faces in scikit-fem's local order, q a monomial of the edge or face parameters."""
    from skfem.quadrature import get_quadrature
    from skfem.refdom import RefTet, RefTri

    corners = np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]])
    rows = []
    s, w = np.polynomial.legendre.leggauss(12)
    s, w = (s + 1) / 2, w / 2                                   # on [0, 1]
    for a, b in RefTet.edges:
        t = corners[b] - corners[a]
        u = np.einsum("...cn,c->...n", field(corners[a][:, None] + np.outer(t, s)), t)
        rows += [u @ (w * s**p) for p in range(k)]
    (st, wt) = get_quadrature(RefTri, 2 * k + 2)
    for a, b, c in RefTet.facets:
        X = corners[a][:, None] + np.outer(corners[b] - corners[a], st[0]) + np.outer(
            corners[c] - corners[a], st[1])
        values = field(X)
        for i in range(k - 1):
            for j in range(k - 1 - i):
                q = wt * st[0] ** i * st[1] ** j
                rows += [np.einsum("...cn,c->...n", values, t) @ q
                         for t in (corners[b] - corners[a], corners[c] - corners[a])]
    if k >= 3:
        X, wv = get_quadrature(RefTet, 2 * k + 2)
        rows += [np.einsum("...cn,c->...n", field(X), corners[m] - corners[0]) @ wv
                 for m in (1, 2, 3)]
    return np.array(rows)


@pytest.mark.parametrize("order", [1, 2, 3])
def test_edge_element_basis_is_dual_to_the_textbook_moments(order):
    """Each basis function has one textbook moment equal to 1 and all others 0 (the element
    is defined as the dual basis of the moments: Nédélec 1980; Monk, Finite Element Methods
    for Maxwell's Equations, 2003, §5.5; from memory), and femcav's DOFs of any smooth field
    are those moments (in its own order). For order 1 the edge moment of a constant field is
    its circulation c · (x_b - x_a) along the edge (Whitney's element: common practice)."""
    from femcav.fem.nedelec import ElementTetNedelec, dofs_of

    element = ElementTetNedelec(order)
    T = textbook_moments(order, lambda X: element.reference_tables(X)[0])
    n = T.shape[0]
    assert T.shape == (n, n) == (element.reference_tables(np.zeros((3, 1)))[0].shape[0],) * 2
    assert np.allclose(np.sort(np.abs(T), axis=1)[:, :-1], 0.0, atol=1e-10)
    assert np.allclose(np.sort(np.abs(T), axis=1)[:, -1], 1.0, atol=1e-10)
    assert sorted(np.argmax(np.abs(T), axis=1)) == list(range(n))        # a permutation
    assert np.allclose(T[np.abs(T) > 0.5], 1.0)

    coefficients = np.random.default_rng(order).standard_normal((3, 3, order + 2))

    def smooth(X):                          # a polynomial field of degree order + 1
        return np.stack([sum(coefficients[c, a, p] * X[a] ** p for a in range(3)
                             for p in range(order + 2)) for c in range(3)])
    assert np.allclose(T @ dofs_of(order, smooth), textbook_moments(order, smooth),
                       rtol=1e-12, atol=1e-12)
    if order == 1:
        c = np.array([0.3, -1.2, 2.0])
        circulations = [c @ (np.eye(4, 3, -1)[b] - np.eye(4, 3, -1)[a])
                        for a, b in ((0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3))]
        constant = dofs_of(1, lambda X: np.broadcast_to(c[:, None], X.shape))
        assert np.allclose(constant, circulations, rtol=1e-14)


# --- study: what a study may vary, and its refusals ------------------------------------------

@pytest.mark.parametrize("spec, field, message", [
    # a point has coordinates 0, 1, 2 only (this index once passed to a traceback)
    ({"parameter": "geometry.block_corner[3]", "values": [1, 2]}, "sweep.parameter",
     "cannot vary 'geometry.block_corner[3]'; name a builder length (geometry.radius, "
     "geometry.block_corner[0]), regions.NAME.eps_r / mu_r / tan_delta or "
     "walls.NAME.conductivity"),
    ({"values": ["1 mm"]}, "sweep.parameter",
     "missing: the parameter to vary, e.g. \"geometry.radius\""),
    ({"parameter": "geometry.radius", "values": ["1 mm"], "points": 3}, "sweep",
     "give either values or from, to and points"),
    ({"parameter": "geometry.radius", "values": []}, "sweep.values", "must be a non-empty list"),
    ({"parameter": "geometry.radius", "from": "1 mm"}, "sweep",
     "missing to, points (or give values = [...])"),
    ({"parameter": "geometry.radius", "values": ["1 mm", "0.1 cm"]}, "sweep",
     "lists a value twice"),
    # a value that is not of the parameter's kind, at its own key
    ({"parameter": "regions.puck.eps_r", "values": [2, "2 mm"]}, "sweep.values[1]",
     "must be a number, got a string"),
    ({"parameter": "geometry.radius", "from": "1 mm", "to": "2 inches", "points": 3},
     "sweep.to", "unknown length unit 'inches' in '2 inches'; known units: pm, nm, um, µm, "
     "μm, mil, thou, mm, cm, in, inch, ft, m, km"),
])
def test_sweep_axis_refusals_name_the_key(spec, field, message):
    """Each mistake in a study axis is one InputError at its key path (the project's
    input-error contract, DEVELOPERS.md)."""
    from femcav.errors import InputError
    from femcav.case_parameters import parse_axis

    with pytest.raises(InputError) as refused:
        parse_axis(spec, "sweep")
    assert (refused.value.field, refused.value.message) == (field, message)


def test_axis_kinds_units_and_the_value_written_into_the_case():
    """A path names a length (m), a number or a conductivity (S/m); a study writes the value
    into a copy of the case tables at that path, and a conductivity replaces a metal preset
    (the copy is deep: the base case stays as it was)."""
    from femcav.errors import InputError
    from femcav.case_parameters import format_value, parse_axis, with_value

    axes = {path: parse_axis({"parameter": path, "values": values}, "tune")
            for path, values in (("geometry.block_corner[2]", ["2 mm", "3 mm"]),
                                 ("regions.puck.tan_delta", [1e-4, 2e-4]),
                                 ("walls.lid.conductivity", ["1e7 S/m", "2e7 S/m"]))}
    assert [(a.kind, a.unit, a.where) for a in axes.values()] == [
        ("length", "m", "tune"), ("number", "", "tune"), ("conductivity", "S/m", "tune")]
    assert axes["geometry.block_corner[2]"].label() == "geometry.block_corner[2] (m)"
    assert axes["regions.puck.tan_delta"].label() == "regions.puck.tan_delta"
    assert axes["geometry.block_corner[2]"].values == pytest.approx((2e-3, 3e-3), rel=1e-12)
    assert axes["walls.lid.conductivity"].origins == ("tune.values[0]", "tune.values[1]")
    assert format_value(axes["regions.puck.tan_delta"], 1.5e-4) == "0.00015"
    assert "mm" in format_value(axes["geometry.block_corner[2]"], 2e-3)
    assert "S/m" in format_value(axes["walls.lid.conductivity"], 1e7)

    base = {"geometry": {"block_corner": ["1 mm", "2 mm", "3 mm"], "width": "20 mm"},
            "regions": {"puck": {"eps_r": 30.0}}, "walls": {"lid": {"metal": "copper"}}}
    point = with_value(base, "geometry.block_corner[1]", 5e-3)
    assert point["geometry"]["block_corner"] == ["1 mm", 5e-3, "3 mm"]
    assert with_value(base, "geometry.width", 0.03)["geometry"]["width"] == 0.03
    assert with_value(base, "regions.puck.tan_delta", 2e-4)["regions"]["puck"] == {
        "eps_r": 30.0, "tan_delta": 2e-4}
    assert with_value(base, "walls.lid.conductivity", 1e7)["walls"]["lid"] == {
        "kind": "metal", "conductivity": 1e7}
    assert with_value(base, "walls.side.conductivity", 1e7)["walls"]["side"] == {
        "kind": "metal", "conductivity": 1e7}
    assert base["walls"]["lid"] == {"metal": "copper"} and base["geometry"]["width"] == "20 mm"
    with pytest.raises(InputError) as refused:
        with_value({"geometry": {"block_corner": "1 mm"}}, "geometry.block_corner[0]", 1e-3)
    assert (refused.value.field, refused.value.message) == (
        "geometry.block_corner", "geometry.block_corner must be given as a list of three "
        "lengths to vary one of them")


def test_a_study_may_vary_only_lengths_the_builder_has():
    from pathlib import Path

    from femcav.case import case_from_data
    from femcav.errors import InputError
    from femcav.case_parameters import check_parameter_exists, parse_axis

    data = LOADED_BOX
    case = case_from_data(data, Path("made-up.toml"))
    for path in ("geometry.width", "geometry.block_size[0]", "regions.other.eps_r"):
        check_parameter_exists(parse_axis({"parameter": path, "values": [1, 2]}, "sweep"), case)
    for path, message in (
            ("geometry.radius", "loaded_box has no length 'radius'; this builder takes width, "
                                "height, length, block_corner, block_size"),
            ("geometry.block_size", "a point's coordinate is named NAME[0], NAME[1] or NAME[2]; "
                                    "a length by its name"),
            ("geometry.width[1]", "a point's coordinate is named NAME[0], NAME[1] or NAME[2]; "
                                  "a length by its name")):
        with pytest.raises(InputError) as refused:
            check_parameter_exists(parse_axis({"parameter": path, "values": [1, 2]}, "sweep"),
                                   case)
        assert (refused.value.field, refused.value.message) == ("sweep.parameter", message)


# --- post: where the perturbation Q stops being valid ----------------------------------------

def _quantities(text):
    """The lengths printed in a warning, in metres."""
    import re
    scale = {"m": 1.0, "mm": 1e-3, "µm": 1e-6}
    return [float(v) * scale[u] for v, u in re.findall(r"([0-9.e+-]+) (m|mm|µm)\b", text)]


def test_wall_q_is_flagged_where_the_skin_depth_is_not_small():
    """Q_w = 2 L_w / δ for a smooth wall (Collin, Foundations for Microwave Engineering, 2nd
    ed., §7.1; from memory), so δ > 0.1 L_w exactly when Q_w < 20; a rough wall's larger R_s
    (Hammerstad-Jensen factor, 1 + (2/π) atan(1.4 (Δ/δ)²), from memory) means a longer L_w.
    δ = sqrt(2 / (ω μ0 σ)) (Pozar, Microwave Engineering, 4th ed., §1.7)."""
    from dataclasses import dataclass

    from scipy.constants import mu_0

    from femcav.post.losses import LossReport
    from femcav.post.loss_validity import ADVICE, loss_validity_summary, loss_warnings
    from femcav.walls import Wall

    f = 10e9
    omega = 2 * np.pi * f
    copper, brass = 5.8e7, 1.5e7                    # S/m (common practice)
    delta = {name: np.sqrt(2 / (omega * mu_0 * s)) for name, s in (("lid", copper),
                                                                     ("side", brass))}
    walls = {"lid": Wall("metal", copper), "side": Wall("metal", brass),
             "rough": Wall("metal", copper, roughness=float(delta["lid"])),
             "cut": Wall("pmc")}
    # Q_lid = 12 / 0.7 = 17.1 < 20: flagged; Q_side = 12 / 0.25 = 48: not
    report = LossReport(q_wall=12.0, q_dielectric=None, q_total=12.0,
                        wall_loss_share={"lid": 0.7, "side": 0.25, "cut": 0.05, "gone": 0.0})
    (warning,) = loss_warnings(f, report, walls)
    assert warning.startswith("wall lid: skin depth ") and warning.endswith(
        "Q_wall by perturbation not valid")
    printed_delta, printed_length = _quantities(warning)
    assert printed_delta == pytest.approx(delta["lid"], rel=5e-3)
    assert printed_length == pytest.approx(12.0 / 0.7 * delta["lid"] / 2, rel=5e-3)
    for q_wall, flagged in ((19.0, True), (21.0, False)):          # either side of Q_w = 20
        one = LossReport(q_wall=q_wall, q_dielectric=None, q_total=q_wall,
                         wall_loss_share={"side": 1.0})
        assert bool(loss_warnings(f, one, walls)) is flagged, q_wall
    # roughness Δ = δ raises R_s by 1 + (2/π) atan(1.4) = 1.61, so Q 17.1 is L_w = 13.7 δ
    rough = LossReport(q_wall=12.0, q_dielectric=None, q_total=12.0,
                       wall_loss_share={"rough": 0.7})
    assert loss_warnings(f, rough, walls) == []
    assert loss_warnings(f, None, walls) == []

    lossy = LossReport(q_wall=None, q_dielectric=8.0, q_total=8.0)
    assert loss_warnings(f, lossy, walls) == [
        "Q_dielectric = 8 < 10: loss not small, Q_dielectric by perturbation not valid"]
    both = LossReport(q_wall=30.0, q_dielectric=30.0, q_total=15.0 / 2)
    assert loss_warnings(f, both, {}) == [
        "Q_total = 7.5 < 10: loss not small, Q_total by perturbation not valid"]

    @dataclass
    class Mode:
        index: int
        loss_warnings: tuple

    assert loss_validity_summary([Mode(1, ()), Mode(2, ())]) == []
    assert loss_validity_summary([Mode(1, ("a", "b")), Mode(2, ()), Mode(3, ("c",))]) == [
        "mode 1: a; b", "mode 3: c", ADVICE]


def test_complex_check_flags_an_unpaired_mode_or_a_disagreeing_q():
    """The perturbation Q_d is trusted when 1/Q_d is within 10 % of the complex solve's."""
    from dataclasses import dataclass

    from femcav.post.losses import LossReport
    from femcav.post.loss_validity import complex_check_warnings, with_complex_warnings

    @dataclass
    class Mode:
        losses: object
        q_dielectric_complex: float | None
        loss_warnings: tuple = ("earlier",)

    def report(q):
        return LossReport(q_wall=None, q_dielectric=q, q_total=q)
    assert complex_check_warnings(Mode(report(100.0), None)) == [
        "no complex eigenvalue left to pair with this mode (one mode each at most)"]
    assert complex_check_warnings(Mode(report(100.0), 105.0)) == []       # 1/Q 4.8 % apart
    assert complex_check_warnings(Mode(report(100.0), 95.0)) == []        # 5 % apart
    assert complex_check_warnings(Mode(None, 95.0)) == []
    (apart,) = complex_check_warnings(Mode(report(100.0), 125.0))        # 20 % apart
    assert apart.startswith("Q_dielectric 100 by perturbation against 125 from the complex solve")
    assert complex_check_warnings(Mode(report(100.0), 80.0))             # 25 % apart
    (mode,) = with_complex_warnings([Mode(report(100.0), 125.0)])
    assert mode.loss_warnings == ("earlier", apart)


def test_v_cycle_of_the_vector_laplacian_aggregates_whole_vertices():
    """Hiptmair and Xu's auxiliary problem is the vector Laplacian (three uncoupled copies of
    the nodal Laplacian, node-major): the V-cycle is pyamg's smoothed aggregation on 3 x 3
    blocks with the given near-null fields (here the curl-free linear fields, as the HX
    preconditioner passes), so that each vertex's three components share their aggregate,
    and it converges as a preconditioner (R. Hiptmair and J. Xu, SIAM J. Numer. Anal. 45
    (2007) 2483-2509, from memory; pyamg's gallery and solver as the reference)."""
    import pyamg
    from pyamg.gallery import poisson
    from scipy.sparse.linalg import LinearOperator, cg

    from femcav.eigen.hx import MAX_COARSE, BlockVCycle, linear_fields

    side = 9
    A = sp.kron(poisson((side, side, side), format="csr"), np.eye(3)).tocsr()
    grid = np.arange(side, dtype=float)
    points = np.array(np.meshgrid(grid, grid, grid, indexing="ij")).reshape(3, -1)
    fields = linear_fields(points)
    cycle = BlockVCycle(A, near_null=fields, blocksize=3)
    state = np.random.get_state()
    np.random.seed(2024)
    try:
        reference = pyamg.smoothed_aggregation_solver(
            A.tobsr(blocksize=(3, 3)), B=fields, max_coarse=MAX_COARSE, max_levels=25,
            keep=False, improve_candidates=None)
    finally:
        np.random.set_state(state)
    assert cycle.n_levels == len(reference.levels) >= 2
    for ours, theirs in zip(cycle.P, reference.levels[:-1]):
        assert ours.shape == theirs.P.shape
        assert abs(ours - theirs.P.tocsr()).max() < 1e-12 * abs(theirs.P).max()
    P = sp.csr_matrix(cycle.P[0])
    pattern = [frozenset(P.indices[P.indptr[i]:P.indptr[i + 1]] // fields.shape[1])
               for i in range(A.shape[0])]
    assert all(pattern[3 * v] == pattern[3 * v + 1] == pattern[3 * v + 2]
               for v in range(A.shape[0] // 3))
    b = np.random.default_rng(4).standard_normal(A.shape[0])
    steps = []
    x, info = cg(A, b, M=LinearOperator(A.shape, matvec=cycle), rtol=1e-8, maxiter=200,
                 callback=lambda xk: steps.append(1))
    assert info == 0 and len(steps) <= 25, len(steps)


def test_factoriser_names_and_refusals(monkeypatch):
    """A factoriser is asked for by name (solve.factorization in a case); PARDISO without MKL is a
    user mistake that says how to install it or what to use instead, and "auto" then means
    SuperLU."""
    from femcav.eigen import factorization, pardiso
    from femcav.errors import InputError

    assert factorization.get_factorizer("superlu") is factorization.FACTORIZERS["superlu"]
    with pytest.raises(InputError) as refused:
        factorization.get_factorizer("cholmod")
    assert (refused.value.option, refused.value.message) == (
        "factorization", "unknown factorisation 'cholmod'; allowed: auto, superlu, pardiso")
    monkeypatch.setattr(pardiso, "available", lambda: False)
    with pytest.raises(InputError) as refused:
        factorization.get_factorizer("pardiso")
    assert (refused.value.option, refused.value.message) == (
        "factorization", "factorization = \"pardiso\" needs MKL: pip install "
        "'femcav[fast]' (or use \"auto\" or \"superlu\")")
    assert factorization.describe("auto") == "SuperLU (MKL PARDISO not installed)"
    assert factorization.library("auto") == "superlu"
    assert [factorization.describe(n) for n in ("superlu", "pardiso")] == ["SuperLU",
                                                                          "MKL PARDISO"]
    monkeypatch.setattr(pardiso, "available", lambda: True)
    assert factorization.describe("auto") == "MKL PARDISO"


def test_sweep_grid_order_and_what_a_study_refuses(tmp_path):
    """A two-parameter sweep is the grid of both axes, the first varying fastest, each value
    keeping the key it came from; a study refuses what mode tracking cannot follow, and a
    point that would be refused is named with its values, at the key of the culprit value."""
    from conftest import box_case
    from femcav.errors import InputError
    from femcav.study.sweep import load_study, parse_sweep, sweep_trials

    def refused(data):
        with pytest.raises(InputError) as caught:
            parse_sweep(data)
        return caught.value.field, caught.value.message

    first = {"parameter": "geometry.width", "values": ["20 mm", "21 mm"]}
    second = {"parameter": "geometry.length", "from": "25 mm", "to": "27 mm", "points": 3}
    spec = parse_sweep({"sweep": {**first, "second": second}})
    assert np.allclose(spec.points(), [(0.020, 0.025), (0.021, 0.025), (0.020, 0.026),
                                       (0.021, 0.026), (0.020, 0.027), (0.021, 0.027)])
    assert [[(axis.path, key) for axis, _, key in trial] for trial in sweep_trials(spec)][:3] == [
        [("geometry.width", "sweep.values[0]"), ("geometry.length", "sweep.second.from")],
        [("geometry.width", "sweep.values[1]"), ("geometry.length", "sweep.second.from")],
        [("geometry.width", "sweep.values[0]"), ("geometry.length", "sweep.second")]]
    assert np.allclose(parse_sweep({"sweep": first}).points(), [(0.020,), (0.021,)])
    assert refused({}) == ("sweep", "the case has no [sweep] table (parameter and values, or "
                                    "from, to and points)")
    assert refused({"sweep": {**first, "second": {**first, "values": ["30 mm"]}}}) == (
        "sweep.second", "the second parameter is the first one again")
    many = {"parameter": "geometry.width", "from": "20 mm", "to": "30 mm", "points": 400}
    assert refused({"sweep": {**many, "second": {**second, "points": 251}}}) == (
        "sweep.second", "400 x 251 = 100400 points; at most 100000 in a sweep")

    sweep = '[sweep]\nparameter = "geometry.width"\nvalues = ["20 mm", "21 mm"]\n'
    for text, field, start in (
            (box_case() + sweep + '[symmetry]\nx = "pec"\n', "symmetry",
             "studies track modes over the whole part; drop [symmetry]"),
            (box_case(extra="error_estimate = true\n") + sweep, "solve.error_estimate",
             "error bars at every study point are not yet available"),
            (box_case() + sweep.replace('"21 mm"', '"-8 mm"'), "sweep.values[1]",
             "the point geometry.width = -8 mm is refused: geometry.width: ")):
        case = tmp_path / "case.toml"
        case.write_text(text)
        with pytest.raises(InputError) as caught:
            load_study(case, parse_sweep, sweep_trials)
        assert caught.value.field == field and caught.value.source == str(case)
        assert caught.value.message.startswith(start), caught.value.message


def test_tune_table_and_its_starting_value(tmp_path):
    """The bracket is sorted with each end keeping its key; defaults for mode and tolerance;
    each mistake is refused at its key; the starting value is read from the case as written
    (a region's number, a wall's conductivity), and what cannot be started from is refused."""
    from pathlib import Path

    from femcav.case import case_from_data
    from femcav.errors import InputError
    from femcav.study.tune import TuneSpec, _reference_value, parse_tune, tune_trials

    spec = parse_tune({"tune": {"parameter": "geometry.width", "bracket": ["22 mm", "18 mm"],
                                "target": "9 GHz"}})
    assert spec.bracket == pytest.approx((0.018, 0.022)) and spec.target_hz == 9e9
    assert spec.bracket_keys == ("tune.bracket[1]", "tune.bracket[0]")
    assert (spec.kind, spec.mode) == ("length", 1) and 0 < spec.tolerance < 1e-3
    assert [[(a.path, v, k) for a, v, k in t] for t in tune_trials(spec)] == [
        [("geometry.width", spec.bracket[0], "tune.bracket[1]")],
        [("geometry.width", spec.bracket[1], "tune.bracket[0]")]]
    for table, field, message in (
            (None, "tune", "the case has no [tune] table (parameter, bracket, target, mode)"),
            ({"parameter": "geometry.width", "target": "9 GHz"}, "tune", "missing bracket"),
            ({"bracket": [1, 2]}, "tune", "missing parameter, target"),
            ({"parameter": "geometry.width", "bracket": ["2 cm", "20 mm"], "target": "9 GHz"},
             "tune.bracket", "the two ends of the bracket are equal")):
        with pytest.raises(InputError) as refused:
            parse_tune({} if table is None else {"tune": table})
        assert (refused.value.field, refused.value.message) == (field, message)

    # a length the builder lacks is refused at the tune table's key, before any solve
    from conftest import box_case
    from femcav.study.sweep import load_study
    case_file = tmp_path / "tune.toml"
    case_file.write_text(box_case() + '[tune]\nparameter = "geometry.radius"\n'
                         'bracket = ["1 mm", "2 mm"]\ntarget = "9 GHz"\n')
    with pytest.raises(InputError) as refused:
        load_study(case_file, parse_tune, tune_trials)
    assert refused.value.field == "tune.parameter"
    assert refused.value.message.startswith("box has no length 'radius'")

    data = {**LOADED_BOX, "regions": {"block": {"eps_r": "2 + x / 0.02", "mu_r": 1.5}},
            "walls": {"z_max": {"kind": "metal", "conductivity": "20 MS/m"},
                      "z_min": {"kind": "pec"}}}
    case = case_from_data(data, Path("made-up.toml"))

    def start(path):
        return _reference_value(data, TuneSpec(path=path, kind="number", bracket=(0.0, 1.0),
                                               target_hz=1e9, mode=1, tolerance=1e-6), case)
    assert start("regions.block.mu_r") == 1.5
    assert start("walls.z_max.conductivity") == pytest.approx(2e7)
    for path, message in (
            ("regions.air.eps_r", "region 'air' has no table in the case"),
            ("regions.block.eps_r", "regions.block.eps_r is given as an expression; only a "
                                    "number can be tuned"),
            ("walls.z_min.conductivity", "the wall has no conductivity to start from"),
            ("walls.x_min.conductivity", "the wall has no conductivity to start from")):
        with pytest.raises(InputError) as refused:
            start(path)
        assert (refused.value.field, refused.value.message) == ("tune.parameter", message)


def test_check_failures_say_which_limit_and_by_how_much():
    """A check at its limit passes; above it, the failure names the quantity, its value and
    the limit (1e-6 each)."""
    from femcav.post.checks import ModeChecks

    assert ModeChecks(1e-6, 1e-6, 1e-6).failures() == [] and ModeChecks(1e-6, 0, 0).passed
    assert ModeChecks(2.5e-6, 0.0, 0.0).failures() == ["residual 2.5e-06 > 1e-06"]
    assert ModeChecks(0.0, 3e-3, 0.0).failures() == ["divergence 3.0e-03 > 1e-06"]
    assert ModeChecks(0.0, 0.0, 0.5).failures() == ["orthogonality 5.0e-01 > 1e-06"]
    assert len(ModeChecks(1.0, 1.0, 1.0).failures()) == 3
    assert ModeChecks(float("nan"), 0.0, 0.0).failures() == ["residual nan > 1e-06"]


def test_mesh_sizes_from_counts_and_the_resolvable_frequency():
    """A quasi-uniform 3D mesh of N elements has h ∝ N^(-1/3) (common practice), so eight
    times the DOFs halve h; points per wavelength fall like 1/f for a fixed field shape, so a
    mode at f with twice the points it needs marks 2 f as the highest frequency resolved."""
    from femcav.post.resolution import Resolution, resolvable_frequency_hz
    from femcav.post.richardson import sizes_from_dofs

    h = sizes_from_dofs([1000, 8000, 27000])
    assert h == pytest.approx([0.1, 0.05, 1 / 30], rel=1e-12)
    assert resolvable_frequency_hz(5e9, Resolution(points_per_wavelength=12.0,
                                                   required=6.0)) == pytest.approx(10e9)


# --- post: the field class and the azimuthal order on closed-form fields ---------------------

@pytest.mark.parametrize("ez, hz, label", [
    (0.019, 0.5, "TE-like"), (0.021, 0.5, "hybrid"), (0.5, 0.019, "TM-like"),
    (0.019, 0.019, "TEM-like"), (0.5, 0.021, "hybrid"), (0.0, 1.0, "TE-like"),
])
def test_field_class_by_the_axial_energy_share(ez, hz, label):
    """The class is read off the weighted share of |E_z|² and |H_z|² in the energy, each
    against 2 % (femcav/post/classify.py's documented rule); points with a small weight count
    little."""
    from femcav.post.classify import field_class

    E = np.tile([np.sqrt(1 - ez), 0.0, np.sqrt(ez)], (3, 1))
    H = np.tile([0.0, np.sqrt(1 - hz), np.sqrt(hz)], (3, 1))
    w = np.array([0.5, 0.3, 0.2])
    assert field_class(E, H, w) == label
    # a point with all of its field along z, but 1 % of the weight: still below 2 %
    E2, H2 = np.array([[1.0, 0, 0], [0, 0, 1.0]]), np.array([[0, 1.0, 0], [0, 0, 1.0]])
    assert field_class(E2, H2, np.array([0.99, 0.01])) == "TEM-like"
    assert field_class(E2, H2, np.array([0.97, 0.03])) == "hybrid"


def pillbox_points(radius, length, inner=0.0, count=20000, seed=7):
    rng = np.random.default_rng(seed)
    r = np.sqrt(inner**2 + (radius**2 - inner**2) * rng.random(count))
    phi, z = 2 * np.pi * rng.random(count), length * rng.random(count)
    return np.column_stack([r * np.cos(phi), r * np.sin(phi), z]), r, phi, z


def test_azimuthal_order_of_te_and_tem_fields():
    """TE_211 of a pillbox, H_z = J_2(p'_21 r / a) cos 2φ sin(πz/d), E transverse (Pozar,
    Microwave Engineering, 4th ed., §6.4; scipy.special for J_2 and p'_21): read from H_z.
    The TEM field of a coaxial line, E = r̂ / r, H = φ̂ / r (Pozar §3.5): no axial field,
    order 0 read from the radial E. Too few points for the ring: unclassified."""
    from scipy.special import jnp_zeros, jv

    from femcav.post.classify import azimuthal_label

    radius, length = 0.010, 0.015
    points, r, phi, z = pillbox_points(radius, length)
    w = np.full(r.size, 1.0 / r.size)
    hz = jv(2, jnp_zeros(2, 1)[0] * r / radius) * np.cos(2 * phi) * np.sin(np.pi * z / length)
    H = np.column_stack([0.3 * np.cos(phi) * hz, 0.3 * np.sin(phi) * hz, hz])
    E = np.column_stack([-np.sin(2 * phi), np.cos(2 * phi), np.zeros_like(r)]) * np.abs(hz)[:, None]
    assert azimuthal_label(points, w, E, H) == "m = 2, TE-like"

    points, r, phi, z = pillbox_points(radius, length, inner=0.003)
    r_hat = np.column_stack([np.cos(phi), np.sin(phi), np.zeros_like(r)])
    phi_hat = np.column_stack([-np.sin(phi), np.cos(phi), np.zeros_like(r)])
    w = np.full(r.size, 1.0 / r.size)
    assert azimuthal_label(points, w, r_hat / r[:, None], phi_hat / r[:, None]) == (
        "m = 0, TEM-like")
    few = slice(0, 30)
    assert azimuthal_label(points[few], w[few], (r_hat / r[:, None])[few],
                           (phi_hat / r[:, None])[few]) == "unclassified (TEM-like)"


def test_richardson_bars_are_roaches_grid_convergence_index():
    """Roache's grid convergence index on the finest mesh, GCI = Fs |f2 - f3| / (r^p - 1),
    with Fs = 1.25 for a three-mesh study whose observed rate is believed and Fs = 3 for two
    meshes (P. J. Roache, Verification and Validation in Computational Science and
    Engineering, 1998, ch. 5; from memory), on exact f = f0 + C h^p sequences."""
    from femcav.post.richardson import extrapolate

    h = np.array([4e-3, 2e-3, 1e-3])
    f0, C = 10e9, -2e14
    f = f0 + C * h**2
    x = extrapolate(h, f, order_rate=2.0)
    assert (x.fallback, x.reason, x.safety_factor) == (False, "", 1.25)
    assert x.rate_used == pytest.approx(2.0, abs=1e-8)
    assert x.error_hz == pytest.approx(1.25 * abs(f[2] - f[1]) / (2**2 - 1), rel=1e-9)
    assert x.error_hz == pytest.approx(1.25 * abs(f[2] - f0), rel=1e-9)

    # p = 2.4 is within 25 % of the order's 2: still believed, the bar taken at rate 2 (the
    # slower, larger correction), f0 from the observed rate
    g = f0 + C * 1e-1 * (h / 1e-3) ** 2.4
    y = extrapolate(h, g, order_rate=2.0)
    assert y.safety_factor == 1.25 and y.fitted_rate == pytest.approx(2.4, rel=1e-8)
    assert y.extrapolated_hz == pytest.approx(f0, rel=1e-9)       # p found to 1e-10
    assert y.error_hz == pytest.approx(1.25 * abs(g[2] - g[1]) / (2**2 - 1), rel=1e-9)

    two = extrapolate(h[1:], f[1:], order_rate=2.0)
    assert (two.fallback, two.reason, two.safety_factor) == (
        True, "two meshes: rate not observable", 3.0)
    assert two.error_hz == pytest.approx(3.0 * abs(f[2] - f[1]) / (2**2 - 1), rel=1e-12)
    assert math.isnan(two.fitted_rate) and two.rate_used == 2.0

    # rates outside the plausible band [0.5, 8], or differences that change sign: the
    # theoretical rate with Fs = 3, and the reason said
    for p, reason in ((12.0, "fitted rate 12 outside [0.5, 8]"),
                      (0.3, "fitted rate 0.3 outside [0.5, 8]")):
        x = extrapolate(h, f0 + 1e6 * (h / 1e-3) ** p, order_rate=2.0)
        assert (x.fallback, x.reason, x.safety_factor, x.rate_used) == (True, reason, 3.0, 2.0)
    x = extrapolate(h, f + np.array([0.0, 7e8, 0.0]), order_rate=2.0)
    assert x.reason == "frequency differences change sign between meshes"

    # order 3 elements converge at h^6 (twice the order): p = 2 data disagree
    slow = extrapolate(h, f, order_rate=6.0)
    assert slow.safety_factor == 3.0 and not slow.fallback
    assert slow.error_hz >= 3.0 * abs(f[2] - f0)


def test_a_degenerate_pair_is_extrapolated_by_its_mean():
    """Two modes of one degenerate pair, split on every mesh by noise of either sign: their
    mean converges like the eigenvalue itself (it is the trace of the perturbation on the
    eigenspace: T. Kato, Perturbation Theory for Linear Operators, ch. 2; from memory), so
    both are extrapolated to the exact f0, and each member's bar adds its distance from the
    mean on the finest mesh (triangle inequality)."""
    from femcav.post.error_estimate import estimate_matched

    sizes = np.array([4e-3, 2e-3, 1e-3])
    f0, C = 10e9, -2e14
    mean = f0 + C * sizes**2
    split = np.array([3e5, -2e5, 1e5])                   # mesh noise, far below 1e-6 f
    single = 7e9 + 1e14 * sizes**2
    matched = [[float(s), float(m + d), float(m - d)] for s, m, d in zip(single, mean, split)]
    overlaps = [[1.0] * 3 for _ in sizes]
    lone, first, second = estimate_matched(sizes, matched, overlaps, order_rate=2.0)
    assert (lone.cluster, lone.cluster_size) == ((), 1)
    assert (first.cluster, second.cluster) == ((2, 3), (2, 3)) and first.cluster_size == 2
    assert [e.index for e in (lone, first, second)] == [1, 2, 3]
    for member, sign in ((first, 1), (second, -1)):
        assert member.extrapolated_hz == pytest.approx(f0, rel=1e-9)
        assert member.frequency_hz == mean[-1] + sign * split[-1]
        # Roache's GCI of the mean (Fs 1.25, rate 2, r = 2) plus the member's own split
        assert member.error_estimate_hz == pytest.approx(
            1.25 * abs(mean[-1] - mean[-2]) / 3 + abs(split[-1]), rel=1e-9)
    assert lone.extrapolated_hz == pytest.approx(7e9, rel=1e-9)


@pytest.mark.parametrize("form", ["E", "H"])
def test_mode_fields_carry_half_the_joule_in_each_field(form):
    """At resonance the time-averaged electric and magnetic energies are equal (Pozar,
    Microwave Engineering, 4th ed., §6.1; common practice), so with the mode scaled to 1 J
    each energy density integrates to 1/2 J; and TE101 of a box, E_y = E0 sin(πx/a)
    sin(πz/d) with W_e = ε0 E0² a b d / 16 (§6.3), peaks at E0 = sqrt(8 / (ε0 a b d))."""
    from scipy.constants import epsilon_0

    from femcav.geometry import build_part
    from femcav.materials import Material
    from femcav.model import make_model
    from femcav.post.fields import mode_fields
    from femcav.solver import solve_model

    a, b, d = BOX
    part = build_part("box", width=a, height=b, length=d, mesh_size=0.004)
    result = solve_model(make_model(part, {"inside": Material()}, {}), modes=1, form=form,
                         order=2)
    (mode,) = result.modes
    fields = mode_fields(result.space, mode.dofs, 2 * np.pi * mode.frequency_hz)
    corners = part.points[part.tets]
    volume = np.abs(np.linalg.det(corners[:, 1:] - corners[:, :1])) / 6
    assert np.sum(fields.w_e * volume) == pytest.approx(0.5, rel=0.03)
    assert np.sum(fields.w_m * volume) == pytest.approx(0.5, rel=0.03)
    peak = np.sqrt(8 / (epsilon_0 * a * b * d))
    assert np.abs(fields.E[:, 1]).max() == pytest.approx(peak, rel=0.1)
    assert np.abs(fields.E[:, 1]).max() <= 1.02 * peak
    assert np.abs(fields.E[:, [0, 2]]).max() < 0.05 * peak


def test_lobpcg_on_a_matrix_pencil_against_scipy_eigh():
    """The block iteration on a plain symmetric-definite pencil (a 1D Laplacian against a
    random SPD mass matrix) finds scipy.linalg.eigh's lowest pairs; its report says what
    was asked and done (block = count + max(3, count // 4) columns unless ``extra`` says,
    converged below the tolerance); null vectors the deflation did not remove come back as
    additional pairs below the lowest-mode scale; too small a problem is refused."""
    import scipy.linalg as la
    from scipy.sparse.linalg import splu

    from femcav.eigen import lobpcg
    from femcav.eigen.interface import EigenRequest

    n = 240
    laplacian = sp.diags([-np.ones(n - 1), 2 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1])
    B = sp.random(n, n, density=0.02, random_state=3) * 0.05
    M = (sp.identity(n) + B @ B.T).tocsc()

    class NoKernel:
        def remove(self, X):
            return X

    def run(K, count, M=M, **options):
        shifted = splu((K + 0.05 * M).tocsc())
        return lobpcg.solve(K.tocsr(), M.tocsr(), NoKernel(), EigenRequest(count),
                            lambda R: shifted.solve(np.asarray(R)), lowest_scale=0.05,
                            **options)

    K = laplacian.tocsr()
    exact = la.eigh(K.toarray(), M.toarray(), eigvals_only=True)
    pairs = run(K, 8)
    assert pairs.values == pytest.approx(exact[:8], rel=1e-9)
    residual = K @ pairs.vectors - M @ pairs.vectors * pairs.values
    assert np.linalg.norm(residual, axis=0).max() < 1e-7 * np.linalg.norm(K @ pairs.vectors,
                                                                         axis=0).min()
    assert np.allclose(pairs.vectors.T @ M @ pairs.vectors, np.eye(8), atol=1e-8)
    stats = pairs.stats
    assert (stats.block_size, stats.requested, stats.converged) == (11, 8, True)
    assert stats.largest_residual == stats.residual_history[-1] < stats.tolerance == 1e-9
    assert 0 < stats.iterations < len(stats.residual_history) + 1
    assert run(K, 8, extra=5).stats.block_size == 13
    assert run(K, 20).stats.block_size == 25

    # two decoupled nodes with no stiffness: two static (null) vectors, returned as well
    K0 = sp.block_diag([laplacian, sp.csr_matrix((2, 2))]).tocsr()
    with_static = run(K0, 3, M=sp.block_diag([M, sp.identity(2)]).tocsc())
    assert with_static.stats.requested == 5
    assert np.abs(with_static.values[:2]).max() < 1e-12
    assert with_static.values[2:] == pytest.approx(exact[:3], rel=1e-9)

    with pytest.raises(ValueError, match="^8 DOFs are too few for 5 modes with LOBPCG$"):
        lobpcg.solve(sp.identity(8).tocsr(), sp.identity(8).tocsr(), NoKernel(),
                     EigenRequest(5), lambda R: R, lowest_scale=1.0)
    with pytest.raises(ValueError, match="^count must be >= 1, got 0$"):
        lobpcg.solve(K, M, NoKernel(), EigenRequest(0), lambda R: R, lowest_scale=1.0)
