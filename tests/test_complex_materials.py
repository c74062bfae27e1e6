"""Complex and tensor materials through the one solve path (issue 18, item 3).

References:
- Uniformly filled box with eps_r = eps' (1 - j tan δ): the pencil's mass matrix is exactly
  (1 - j tan δ) times the lossless one, so every k0² is the lossless one over (1 - j tan δ)
  and f = f0 / sqrt(1 - j tan δ), Q = Re f / (2 Im f) (Pozar, Microwave Engineering, 4th ed.,
  §6.1 for Q from the complex frequency; §6.3 for the box; common practice).
- Box filled with a diagonal anisotropic medium eps = diag(ex, ey, ez): the separable fields
  E_x = A cos(kx x) sin(ky y) sin(kz z), E_y = B sin cos sin, E_z = C sin sin cos with
  k = (mπ/a, nπ/b, lπ/d) satisfy ∇×∇×E = k0² eps E when (|k|² I - k kᵀ) (A, B, C) =
  k0² diag(eps) (A, B, C); a component whose pattern vanishes (a zero index on another axis)
  is left out. Derived here from ∇×∇×E = ∇(∇·E) - ∇²E (any EM text, e.g. Pozar §1.3) and
  solved with scipy.linalg.eigh.
"""

import itertools
import math

import numpy as np
import pytest
import scipy.linalg as la
from scipy.constants import c as C0

from femcav.errors import InputError
from femcav.fem.coefficients import HERMITIAN, SYMMETRIC
from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import solve_model

A, B, D = 0.02286, 0.01016, 0.030


@pytest.fixture(scope="module")
def box_mesh():
    return build_part("box", width=A, height=B, length=D, mesh_size=0.005)


def _solve(mesh, material, **options):
    return solve_model(make_model(mesh, {"inside": material}, {}), **options)


def anisotropic_box_frequencies(eps_diag, count, max_index=5):
    """The lowest ``count`` resonances (Hz) of a PEC box filled with diag(eps_diag)."""
    values = []
    for m, n, l in itertools.product(range(max_index), repeat=3):
        k = np.array([m * math.pi / A, n * math.pi / B, l * math.pi / D])
        # a component survives when the sines of the two other axes do not vanish
        alive = [i for i in range(3) if all(k[j] > 0 for j in range(3) if j != i)]
        if not alive:
            continue
        curl_curl = (k @ k) * np.eye(3) - np.outer(k, k)
        sub = np.ix_(alive, alive)
        found = la.eigh(curl_curl[sub], np.diag(eps_diag)[sub], eigvals_only=True)
        values += [v for v in found if v > 1e-9 * (k @ k)]   # drop the gradient (k0² = 0)
    return np.sort(C0 * np.sqrt(values) / (2 * math.pi))[:count]


def test_lossy_filling_inside_the_solve_gives_complex_frequencies_q_and_fields(box_mesh):
    tan_delta = 2e-3
    lossless = _solve(box_mesh, Material(eps_r=2.5), modes=4, order=2)
    lossy = _solve(box_mesh, Material(eps_r=2.5 * (1 - 1j * tan_delta)), modes=4, order=2,
                   losses_inside=True)
    assert lossy.eigen_stats.method == "arnoldi"
    f = np.array([m.complex_frequency_hz for m in lossy.modes])
    f0 = np.array([m.frequency_hz for m in lossless.modes])
    exact = f0 / np.sqrt(1 - 1j * tan_delta)
    assert np.allclose(f, exact, rtol=1e-8)
    q = np.array([m.q_eigenvalue for m in lossy.modes])
    assert np.allclose(q, exact.real / (2 * exact.imag), rtol=1e-8)
    assert abs(q[0] * tan_delta - 1) < 1e-5            # Q_d = 1/tan δ to first order
    for mode in lossy.modes:
        assert mode.checks.passed                       # residual, gradient-free, orthogonal
        assert np.iscomplexobj(mode.dofs)
        # the perturbation estimate from the complex field agrees to O(tan δ)
        assert mode.losses.q_dielectric == pytest.approx(mode.q_eigenvalue, rel=1e-5)
        assert mode.frequency_hz == pytest.approx(mode.complex_frequency_hz.real)


def test_complex_check_returns_the_lossy_modes_with_their_fields(box_mesh):
    result = _solve(box_mesh, Material(eps_r=2.5, tan_delta=1e-3), modes=3, order=1,
                    complex_check=True)
    lossy = result.complex_check
    assert lossy is not None and len(lossy.modes) >= 3
    assert all(m.checks.passed and np.iscomplexobj(m.dofs) for m in lossy.modes)
    # each real mode's partner is one of the lossy solve's modes
    partners = {m.complex_frequency_hz for m in lossy.modes}
    assert all(m.complex_frequency_hz in partners for m in result.modes)


def test_diagonal_anisotropic_filling_against_the_separable_solution(box_mesh):
    eps = (2.0, 3.0, 4.0)
    result = _solve(box_mesh, Material(eps_r=np.diag(eps)), modes=6, order=2)
    assert result.space.pencil_kind == HERMITIAN and result.eigen_stats.method != "arnoldi"
    found = np.array([m.frequency_hz for m in result.modes])
    exact = anisotropic_box_frequencies(eps, 6)
    assert np.all(exact[1:] / exact[:-1] - 1 > 1e-3)   # distinct, so pairing by order holds
    # order 2 on a 5 mm mesh (about 8 elements per wavelength at the sixth mode): measured
    # 1.4e-3 at worst
    assert np.allclose(found, exact, rtol=3e-3)
    assert all(m.checks.passed for m in result.modes)
    # and the error falls as the mesh is refined (measured 1.4e-3 -> 6.4e-4 at 3.5 mm)
    finer = _solve(build_part("box", width=A, height=B, length=D, mesh_size=0.0035),
                   Material(eps_r=np.diag(eps)), modes=6, order=2)
    error = lambda r: np.abs(np.array([m.frequency_hz for m in r.modes]) / exact - 1).max()
    assert error(finer) < error(result) / 1.5


@pytest.mark.parametrize("form", ["E", "H"])
def test_isotropic_tensor_equals_the_scalar_material(box_mesh, form):
    """ε_r I and μ_r I as tensors must give what the scalars give, in every quantity the
    solve derives from the coefficients: frequencies, wall Q (μ_r⁻¹ curl E on the walls),
    dielectric Q and filling factors (energies Re(Ē·ε E)), magnetic filling, resolution."""
    from femcav.post.filling import magnetic_filling
    from femcav.walls import Wall

    copper = {"x_min": Wall("metal", conductivity=5.8e7), "z_max": Wall("metal",
                                                                      conductivity=5.8e7)}

    def solve(material):
        return solve_model(make_model(box_mesh, {"inside": material}, copper), modes=4,
                           order=1, form=form)

    scalar = solve(Material(eps_r=3.0, mu_r=1.5, tan_delta=1e-3))
    tensor = solve(Material(eps_r=3.0 * np.eye(3), mu_r=1.5 * np.eye(3), tan_delta=1e-3))
    for a, b in zip(scalar.modes, tensor.modes):
        assert b.frequency_hz == pytest.approx(a.frequency_hz, rel=1e-10)
        assert b.losses.q_wall == pytest.approx(a.losses.q_wall, rel=1e-9)
        assert b.losses.q_dielectric == pytest.approx(a.losses.q_dielectric, rel=1e-9)
        assert b.resolution.points_per_wavelength == pytest.approx(
            a.resolution.points_per_wavelength, rel=1e-9)
        fa, fb = (magnetic_filling(r.space, m.dofs) for r, m in ((scalar, a), (tensor, b)))
        assert fb.total["inside"] == pytest.approx(fa.total["inside"], rel=1e-9)
        assert fb.along_axis["inside"] == pytest.approx(fa.along_axis["inside"], abs=1e-9)


def test_a_hermitian_tensor_keeps_the_hermitian_solver_and_a_real_spectrum(box_mesh):
    # a gyrotropic permittivity [[e, jκ, 0], [-jκ, e, 0], [0, 0, e]]: lossless, not reciprocal
    kappa = 0.5
    gyro = np.array([[3.0, 1j * kappa, 0], [-1j * kappa, 3.0, 0], [0, 0, 3.0]])
    result = _solve(box_mesh, Material(eps_r=gyro), modes=4, order=1)
    assert result.space.pencil_kind == HERMITIAN
    assert all(m.complex_frequency_hz is None and m.checks.passed for m in result.modes)
    # κ -> -κ is the complex conjugate problem: the same real spectrum
    mirrored = _solve(box_mesh, Material(eps_r=gyro.conj()), modes=4, order=1)
    assert np.allclose([m.frequency_hz for m in result.modes],
                       [m.frequency_hz for m in mirrored.modes], rtol=1e-9)


def test_a_lossy_tensor_is_complex_symmetric(box_mesh):
    model = make_model(box_mesh, {"inside": Material(eps_r=np.diag([2, 3, 4 - 0.01j]))}, {})
    assert build_space(model, "E", 1).pencil_kind == SYMMETRIC


def test_bad_tensors_are_refused(box_mesh):
    with pytest.raises(InputError, match="3 x 3"):
        Material(eps_r=np.eye(2))
    with pytest.raises(InputError, match="positive definite"):
        make_model(box_mesh, {"inside": Material(eps_r=np.diag([1.0, -2.0, 1.0]))}, {})
    with pytest.raises(InputError, match="either as a complex eps_r or as tan_delta"):
        Material(eps_r=2 - 0.1j, tan_delta=0.01)
    general = np.array([[3.0, 1.0, 0], [0.2j, 3.0, 0], [0, 0, 3.0]])
    with pytest.raises(InputError, match="neither Hermitian"):
        _solve(box_mesh, Material(eps_r=general), modes=2)


def test_case_file_losses_inside_the_solve(tmp_path):
    """[solve] losses_inside: modes.json gives [Re f, Im f] and the Q they imply, which for a
    filled box is Q_d = 1/tan δ to first order (Pozar §6.1, common practice)."""
    import json

    from femcav.cli import main
    from conftest import box_case

    tan_delta = 1e-3
    case = tmp_path / "case.toml"
    case.write_text(box_case("5 mm", 2, dims=("22.86 mm", "10.16 mm", "30 mm"))
                    .replace("modes = 2", "modes = 2\nlosses_inside = true")
                    + f"[regions.inside]\neps_r = 2.0\ntan_delta = {tan_delta}\n")
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out), "-q", "--no-report"]) == 0
    rows = json.loads((out / "modes.json").read_text())["modes"]
    for row in rows:
        real, imaginary = row["complex_frequency_hz"]
        assert real == pytest.approx(row["frequency_hz"])
        assert row["q_eigenvalue"] == pytest.approx(real / (2 * imaginary))
        assert row["q_eigenvalue"] == pytest.approx(1 / tan_delta, rel=1e-5)
    assert "Q (f)" in (out / "table.txt").read_text()


def test_section_complex_check_returns_the_lossy_modes_with_their_fields():
    """The body-of-revolution solver's complex check: for a uniformly filled pillbox the
    complex solve's frequencies are the real ones over sqrt(1 - j tan δ) (as for the box
    above), and each comes with a field that passes the checks."""
    from femcav.axisymmetric.model import make_axisymmetric_model
    from femcav.axisymmetric.solve import solve_axisymmetric
    from femcav.geometry import BUILDERS
    from femcav.geometry.parts import Sizing
    from femcav.geometry.section import mesh_section

    tan_delta = 1e-3
    section = mesh_section(BUILDERS["pillbox"].layout(radius=0.01, length=0.015),
                           Sizing(size=0.002))
    model = make_axisymmetric_model(section, {"inside": Material(eps_r=2.0,
                                                                 tan_delta=tan_delta)}, {})
    result = solve_axisymmetric(model, orders=(0, 1), modes=3, order=2, complex_check=True)
    lossy = result.complex_check
    assert lossy is not None and {m.m for m in lossy.modes} == {0, 1}
    assert all(m.checks.passed and np.iscomplexobj(m.dofs) for m in lossy.modes)
    for mode in result.modes:
        exact = mode.frequency_hz / np.sqrt(1 - 1j * tan_delta)
        assert mode.complex_frequency_hz == pytest.approx(exact, rel=1e-8)
        partner = min(abs(m.complex_frequency_hz - mode.complex_frequency_hz)
                      for m in lossy.modes)
        assert partner < 1e-12 * mode.frequency_hz          # it is one of the lossy modes


@pytest.mark.parametrize("form", ["E", "H"])
def test_section_losses_inside_the_solve(form):
    """A filled pillbox section with the loss in the operator: f = f0 / sqrt(1 - j tan δ)
    exactly for a uniform filling (see above), in either field form, and the perturbation
    Q_d from the stored (real-phase) field agrees to O(tan δ)."""
    from femcav.axisymmetric.model import make_axisymmetric_model
    from femcav.axisymmetric.solve import solve_axisymmetric
    from femcav.geometry import BUILDERS
    from femcav.geometry.parts import Sizing
    from femcav.geometry.section import mesh_section

    tan_delta = 1e-3
    section = mesh_section(BUILDERS["pillbox"].layout(radius=0.01, length=0.015),
                           Sizing(size=0.002))
    lossless = solve_axisymmetric(make_axisymmetric_model(
        section, {"inside": Material(eps_r=2.0)}, {}), orders=(0, 1), modes=3, order=2,
        form=form)
    lossy = solve_axisymmetric(make_axisymmetric_model(
        section, {"inside": Material(eps_r=2.0, tan_delta=tan_delta)}, {}), orders=(0, 1),
        modes=3, order=2, form=form, losses_inside=True)
    assert lossy.eigen_stats.method == "arnoldi"
    for real, mode in zip(lossless.modes, lossy.modes):
        exact = real.frequency_hz / np.sqrt(1 - 1j * tan_delta)
        assert mode.complex_frequency_hz == pytest.approx(exact, rel=1e-8)
        assert mode.q_eigenvalue == pytest.approx(exact.real / (2 * exact.imag), rel=1e-8)
        assert mode.checks.passed and mode.m == real.m
        assert mode.losses.q_dielectric == pytest.approx(mode.q_eigenvalue, rel=1e-5)


def test_overlaps_of_complex_modes_ignore_a_global_phase(box_mesh):
    """Mode matching (sweeps, error bars) of complex modes: a field times e^{jθ} is the same
    mode, so its overlaps equal those of the real field (the M-inner product's
    Cauchy-Schwarz bound makes the diagonal 1)."""
    from dataclasses import replace

    from femcav.post.field_overlap import result_overlaps

    real = _solve(box_mesh, Material(eps_r=2.0), modes=3, order=1)
    turned = replace(real, modes=[replace(m, dofs=m.dofs * np.exp(0.7j * (i + 1)))
                                  for i, m in enumerate(real.modes)])
    expected = result_overlaps(real, real)
    found = result_overlaps(real, turned)
    assert np.allclose(found.matrix, expected.matrix, atol=1e-12)
    assert np.allclose(np.abs(found.inner), np.abs(expected.inner), atol=1e-12)
    assert np.allclose(np.diag(found.matrix), 1.0)


def test_losses_inside_a_periodic_cell_at_a_general_phase_is_refused(tmp_path, capsys):
    """Pᴴ K P with a complex-symmetric K and a phase-linked P is neither Hermitian nor
    complex symmetric (transpose it: Pᵀ K P̄), so neither solver family applies: refused with
    the way out, before a wrong answer; at 180 deg (a real P) it solves."""
    from femcav.cli import main

    text = """
title = "Larkspur test: lossy guide cell"
[geometry]
builder = "box"
width = "22.86 mm"
height = "10.16 mm"
length = "12 mm"
[regions.inside]
eps_r = 2.0
tan_delta = 1e-3
[mesh]
size = "5 mm"
[periodic]
pair = ["z_min", "z_max"]
phase = "PHASE"
[solve]
modes = 2
order = 2
losses_inside = true
"""
    case = tmp_path / "cell.toml"
    case.write_text(text.replace("PHASE", "120 deg"))
    assert main(["solve", str(case), "--out", str(tmp_path / "a"), "-q", "--no-report"]) == 2
    assert "neither Hermitian" in capsys.readouterr().err
    case.write_text(text.replace("PHASE", "180 deg"))
    assert main(["solve", str(case), "--out", str(tmp_path / "b"), "-q", "--no-report"]) == 0
