"""Open resonators: absorbing regions (perfectly matched layers, fem.absorber), the radiation
Q and the layer's own modes (post.radiation), the sphere and puck builders, the case keys.

Reference: the dielectric sphere in free space (the isolated puck below has its own). Its
modes are the complex roots of the characteristic equations of the spherical-wave expansion
(Stratton, Electromagnetic Theory, 1941, §9.22-9.25; Gastine, Courtois and Dormann, IEEE
T-MTT 15(12), 1967). With time
dependence e^{jωt} the field outside is an outgoing spherical Hankel function h_n^(2)(k0 r)
(≈ e^{-jk0 r}/(k0 r)), inside a regular j_n(k1 r), k1 = sqrt(eps_r) k0, mu_r = 1. Write
ψ(z) = [z f(z)]' / f(z) for the Riccati ratio of f = j_n or h_n^(2). For a TE mode
(E = f(r) X_nm, tangential) E_t ∝ f and H_t ∝ (1/μ)(1/r) d(r f)/dr must be continuous at
r = a, so

    TE:  ψ_j(k1 a) = ψ_h(k0 a),

and for a TM mode (H = g(r) X_nm) H_t ∝ g and E_t ∝ (1/ε)(1/r) d(r g)/dr give

    TM:  ψ_j(k1 a) / eps_r = ψ_h(k0 a).

n = 1 is the magnetic-dipole (TE) and electric-dipole (TM) mode. The roots x = k0 a are
complex with Im x > 0 (a decaying mode for e^{jωt}); f = c x / (2π a) and Q = Re f / (2 Im f)
(Pozar, Microwave Engineering, 4th ed., §6.1, Q from the complex frequency). They are found
here with scipy.special's complex spherical Bessel functions and scipy.optimize.root on the
real and imaginary parts (femcav.analytic.dielectric_sphere, where the starting values are
derived), and checked here by their residual.

The 1/8 models keep one dipole: a magnetic dipole along z has E = E_φ, tangential to z = 0
(PMC there) and normal to x = 0 and y = 0 (PEC); the electric dipole the other way round.
"""

import math

import numpy as np
import pytest
from scipy.constants import c as C0
from scipy.special import spherical_jn, spherical_yn

from femcav.analytic.dielectric_sphere import dielectric_sphere_resonance
from femcav.case import case_from_data
from femcav.errors import InputError
from femcav.fem.absorber import (AbsorbingMaterial, Layer, find_layers, stretch_jacobian,
                                 stretched)
from femcav.fem.assembly import assemble
from femcav.fem.gradient import kernel_basis
from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.geometry.parts import Sizing
from femcav.materials import VACUUM, Material
from femcav.model import make_model
from femcav.post.radiation import LAYER_SHARE_LIMIT
from femcav.solver import complex_modes, solve_model
from femcav.walls import Wall

RADIUS = 0.01
DIPOLE_WALLS = {"TE": ("pec", "pec", "pmc"), "TM": ("pmc", "pmc", "pec")}


def exact_sphere_mode(eps_r: float, kind: str, n: int = 1) -> complex:
    """The complex frequency (Hz) of the TE or TM mode of order n of a sphere of RADIUS
    (femcav.analytic.dielectric_sphere: the equations above, solved with scipy)."""
    return dielectric_sphere_resonance(RADIUS, eps_r, kind, n)


def test_the_exact_roots_solve_their_equations():
    # the characteristic equations written out here again, independently of the module
    for eps_r, kind, n in ((36.0, "TE", 1), (36.0, "TM", 1), (80.0, "TE", 1), (36.0, "TE", 2)):
        x0 = 2 * math.pi * RADIUS * exact_sphere_mode(eps_r, kind, n) / C0
        x1 = math.sqrt(eps_r) * x0
        j = lambda z, d=False: spherical_jn(n, z, derivative=d)
        h = lambda z, d=False: (spherical_jn(n, z, derivative=d)
                                - 1j * spherical_yn(n, z, derivative=d))
        inside = (j(x1) + x1 * j(x1, True)) / j(x1) / (eps_r if kind == "TM" else 1.0)
        outside = (h(x0) + x0 * h(x0, True)) / h(x0)
        assert abs(inside - outside) < 1e-8 and x0.imag > 0
        # the high-eps_r limits: TE_n near a zero of j_(n-1), TM_1 near one of j_1
        assert abs(x1.real - {("TE", 1): math.pi, ("TE", 2): 4.493, ("TM", 1): 4.493}[
            kind, n]) < 0.2


def sphere_model(eps_r: float, kind: str, inside: float, outside: float, *,
                 absorber: Material | None = None, walls=None, **open_sizes):
    mesh = build_part("sphere", radius=RADIUS, symmetry=("x", "y", "z"),
                      sizing=Sizing(size=outside, region_sizes={"sphere": inside}, curved=True),
                      **open_sizes)
    walls = {f"symmetry_{axis}": Wall(kind=k)
             for axis, k in zip("xyz", walls or DIPOLE_WALLS[kind])}
    layer = absorber if absorber is not None else AbsorbingMaterial(pml="spherical")
    return make_model(mesh, {"sphere": Material(eps_r=eps_r), "air": VACUUM,
                             "absorber": layer}, walls)


def nearest(result, f_exact):
    return min(result.modes, key=lambda m: abs(m.complex_frequency_hz - f_exact))


# eps_r, kind, element size in the sphere and outside (m). Order 2 on curved tetrahedra with
# the builder's default clearance and layer (20 mm each) and the default strength; measured
# (df, dQ): 36 TE (+6e-4, +0.4 %; H form -6e-4, +0.8 %), 36 TM (+2.7e-4, -1.1 %), 80 TE
# (+2.9e-4, -0.1 %).
SPHERES = [(36.0, "TE", 0.003, 0.008, "E"), (36.0, "TE", 0.003, 0.008, "H"),
           (36.0, "TM", 0.003, 0.006, "E"), (80.0, "TE", 0.002, 0.006, "E")]


@pytest.mark.parametrize("eps_r, kind, inside, outside, form", SPHERES)
def test_dielectric_sphere_against_the_exact_complex_resonance(eps_r, kind, inside, outside,
                                                               form):
    exact = exact_sphere_mode(eps_r, kind)
    q_exact = exact.real / (2 * exact.imag)
    result = solve_model(sphere_model(eps_r, kind, inside, outside), modes=3,
                         near_hz=exact.real, order=2, form=form)
    assert result.eigen_stats.method == "arnoldi"
    mode = nearest(result, exact)
    assert abs(mode.frequency_hz / exact.real - 1) < 2e-3          # issue 19 asks 1e-2
    assert abs(mode.q_radiation / q_exact - 1) < 0.03              # issue 19 asks 5 %
    assert mode.q_radiation == mode.q_eigenvalue                   # the layer is the only loss
    assert mode.absorber_energy_share < 0.05 and mode.checks.passed


def test_sphere_te2_mode():
    # the magnetic quadrupole (TE, n = 2): E = E_φ-like patterns with PEC on all three
    # planes (found there by femcav's symmetry classes; measured f +1.4e-3, Q -0.1 %
    # against 3.53574 GHz, Q 470.9)
    exact = exact_sphere_mode(36.0, "TE", n=2)
    result = solve_model(sphere_model(36.0, "TE", 0.003, 0.008, walls=("pec",) * 3),
                         modes=3, near_hz=exact.real, order=2)
    mode = nearest(result, exact)
    assert abs(mode.frequency_hz / exact.real - 1) < 3e-3
    assert abs(mode.q_radiation / (exact.real / (2 * exact.imag)) - 1) < 0.03


def test_layer_modes_leave_the_table_and_the_default_target_is_printed(capsys):
    from femcav.progress import Progress

    exact = exact_sphere_mode(36.0, "TE")
    result = solve_model(sphere_model(36.0, "TE", 0.003, 0.008), modes=4, order=2,
                         progress=Progress())
    err = capsys.readouterr().err
    assert "open problem without [solve] near: looking near" in err
    assert "spherical layer" in err and "inner radius 30 mm" in err   # 10 + 20 mm clearance
    # c / (n D): half a wavelength across the 20 mm sphere at eps_r 36, within 3 % of the
    # exact mode (k1 a = 3.07 against π)
    assert abs(result.near_hz / exact.real - 1) < 0.03
    assert result.layer_modes, "the default target has layer modes nearby (measured: 3)"
    assert f"{len(result.layer_modes)} of {len(result.modes) + len(result.layer_modes)}" in err
    assert all(m.absorber_energy_share > LAYER_SHARE_LIMIT for m in result.layer_modes)
    assert all(m.absorber_energy_share <= LAYER_SHARE_LIMIT for m in result.modes)
    assert [m.index for m in result.modes] == list(range(1, len(result.modes) + 1))
    assert abs(nearest(result, exact).frequency_hz / exact.real - 1) < 2e-3


def test_layer_check_finds_the_modes_that_move_with_the_layer(capsys):
    # a physical mode does not depend on the layer; the layer's own modes do (measured,
    # strength 6 -> 9: the sphere's mode moved 5e-5, the layer's modes 30 to 60 %)
    from femcav.progress import Progress

    exact = exact_sphere_mode(36.0, "TE")
    result = solve_model(sphere_model(36.0, "TE", 0.004, 0.01), modes=4, order=2,
                         near_hz=exact.real * 1.02, layer_check=True, progress=Progress())
    err = capsys.readouterr().err
    assert f"layer check: {len(result.layer_modes)} of 4 modes move" in err
    (mode,) = result.modes
    assert abs(mode.frequency_hz / exact.real - 1) < 2e-3


def test_dielectric_loss_beside_radiation():
    # 1/Q_total = 1/Q_rad + 1/Q_d (independent losses add; Pozar, Microwave Engineering,
    # 4th ed., §6.1, common practice). Inside the solve, the dielectric part is taken off the
    # complex frequency's Q with its perturbation estimate, and what is left is the same
    # radiation Q as without loss, to the order of tan δ (measured: Q_rad 43.33, Q_d 535.1,
    # Q from the complex frequency 39.99 against 40.08 expected, Q_rad inside 43.22, -0.25 %).
    tan_delta = 2e-3
    exact = exact_sphere_mode(36.0, "TE")
    plain = sphere_model(36.0, "TE", 0.003, 0.008)
    lossy = make_model(plain.mesh, {**plain.materials,
                                    "sphere": Material(eps_r=36.0, tan_delta=tan_delta)},
                       plain.walls)
    reference = nearest(solve_model(plain, modes=3, near_hz=exact.real, order=2), exact)
    outside = nearest(solve_model(lossy, modes=3, near_hz=exact.real, order=2), exact)
    q_d = outside.losses.q_dielectric
    assert q_d == pytest.approx(1 / (tan_delta * outside.losses.filling_factor["sphere"]))
    assert outside.q_radiation == pytest.approx(reference.q_radiation, rel=1e-9)
    assert outside.losses.q_total == pytest.approx(1 / (1 / q_d + 1 / outside.q_radiation))
    inside = nearest(solve_model(lossy, modes=3, near_hz=exact.real, order=2,
                                 losses_inside=True), exact)
    assert 1 / inside.q_eigenvalue == pytest.approx(1 / reference.q_radiation + 1 / q_d,
                                                    rel=0.02)
    assert inside.q_radiation == pytest.approx(reference.q_radiation, rel=0.02)


def test_a_closed_part_through_the_complex_solver_has_real_frequencies():
    # the sphere in a PEC ball (the shell plain air): a closed, lossless cavity, whose
    # pencil handed to the complex-symmetric solver must give the Hermitian solver's modes
    # with vanishing imaginary parts (Q beyond 1e8)
    model = sphere_model(36.0, "TE", 0.003, 0.008, absorber=VACUUM)
    real = solve_model(model, modes=3, near_hz=2.4e9, order=2)
    assert all(m.complex_frequency_hz is None for m in real.modes)
    space = build_space(model, "E", 2)
    K, M = (A.astype(complex) for A in assemble(space))    # as a lossy or open pencil is
    f = np.array([m.complex_frequency_hz for m in complex_modes(
        K, M, kernel_basis(space), shift=(2 * math.pi * 2.4e9 / C0) ** 2, count=3, order=2)])
    for mode in real.modes:
        partner = f[np.argmin(np.abs(f.real - mode.frequency_hz))]
        assert partner.real == pytest.approx(mode.frequency_hz, rel=1e-9)
        assert abs(partner.imag) < 1e-8 * partner.real / 2       # Q = Re f / (2 |Im f|) > 1e8


def test_stretch_tensors_match_their_closed_forms():
    # spherical: Λ = det(J) J⁻¹J⁻ᵀ = (r̃²/(r² s)) r̂r̂ᵀ + s (I - r̂r̂ᵀ) for J = s r̂r̂ᵀ +
    # (r̃/r)(I - r̂r̂ᵀ) (derived in fem.absorber; Teixeira and Chew 1997)
    layer = Layer("shell", "spherical", 2.0, np.zeros(3), np.zeros(3), np.array([1.0, 0, 0]),
                  np.zeros(3), np.array([0.5, 0, 0]))
    point = np.array([0.6, 0.8, 0.9])            # r = 1.375: 0.375 into the layer
    r, xi = np.linalg.norm(point), (np.linalg.norm(point) - 1.0) / 0.5
    s, r_tilde = 1 - 3j * 2.0 * xi**2, r - 1j * 2.0 * 0.5 * xi**3
    unit = point / r
    radial = np.outer(unit, unit)
    expected = r_tilde**2 / (r**2 * s) * radial + s * (np.eye(3) - radial)
    at = lambda layer, p: stretch_jacobian(layer, np.reshape(p, (3, 1)))[0]   # one point
    found = stretched(np.array(1.0), at(layer, point))
    assert np.allclose(found, expected, rtol=1e-12)
    assert np.allclose(found, found.T)                          # complex symmetric
    # inside the inner surface the stretch is the identity
    assert np.allclose(at(layer, [0.3, 0.2, 0.1]), np.eye(3))
    # cartesian, one axis stretched: diag(1/s, s, s) (any PML text, common practice)
    box = Layer("slab", "cartesian", 2.0, np.zeros(3), -np.ones(3), np.ones(3), np.zeros(3),
                np.array([0.5, 0, 0]))
    s = 1 - 3j * 2.0 * 0.5**2
    assert np.allclose(stretched(np.array(1.0), at(box, [1.25, 0, 0])),
                       np.diag([1 / s, s, s]))


    # cylindrical, a point beyond both the side and the top: in the frame (ρ̂, φ̂, ẑ)
    # Λ = diag(ρ̃ s_z / (ρ s_ρ), s_ρ s_z ρ / ρ̃, s_ρ ρ̃ / (ρ s_z)) (Teixeira and Chew 1997)
    can = Layer("can", "cylindrical", 2.0, np.zeros(3), np.array([0, -1.0, 0]),
                np.array([1.0, 1.0, 0]), np.array([0, 0.5, 0]), np.array([0.5, 0.5, 0]))
    point = np.array([0.0, 1.2, 1.1])            # ρ = 1.2 (0.2 deep), z = 1.1 (0.1 deep)
    s_r, s_z = 1 - 3j * 2.0 * 0.4**2, 1 - 3j * 2.0 * 0.2**2
    rho, rho_t = 1.2, 1.2 - 1j * 2.0 * 0.5 * 0.4**3
    frame = np.array([[0, 1.0, 0], [-1.0, 0, 0], [0, 0, 1.0]])   # rows ρ̂, φ̂, ẑ at (0, ρ)
    expected = frame.T @ np.diag([rho_t * s_z / (rho * s_r), s_r * s_z * rho / rho_t,
                                  s_r * rho_t / (rho * s_z)]) @ frame
    assert np.allclose(stretched(np.array(1.0), at(can, point)), expected, rtol=1e-12)


# Kajfez and Guillon, Dielectric Resonators, 1986, ch. 1 (from memory): the TE01δ mode of an
# isolated puck, f = 34 / (a sqrt(eps_r)) (a/H + 3.45) GHz with a and H in mm, about ±2 %
# for 0.5 < a/H < 2 and 30 < eps_r < 50.
PUCK = dict(radius=0.005, height=0.004)
PUCK_EPS = 38.0


def puck_te01_estimate() -> float:
    a, h = 1e3 * PUCK["radius"], 1e3 * PUCK["height"]
    return 34 / (a * math.sqrt(PUCK_EPS)) * (a / h + 3.45) * 1e9


def puck_model(shape: str, inside=0.002, outside=0.005):
    """The puck, 1/8 model with the TE01δ walls (a magnetic dipole along z), wrapped in air
    10 mm beyond its faces and a 10 mm layer of ``shape`` (the builder's shell)."""
    shell = {"spherical": "sphere", "cylindrical": "cylinder", "cartesian": "box"}[shape]
    mesh = build_part("puck", clearance=0.01, absorber_thickness=0.01, shell=shell,
                      sizing=Sizing(size=outside, region_sizes={"puck": inside}, curved=True),
                      symmetry=("x", "y", "z"), **PUCK)
    walls = {f"symmetry_{axis}": Wall(kind=k) for axis, k in zip("xyz", DIPOLE_WALLS["TE"])}
    return make_model(mesh, {"puck": Material(eps_r=PUCK_EPS), "air": VACUUM,
                             "absorber": AbsorbingMaterial(pml=shape)}, walls)


def puck_mode(shape: str):
    estimate = puck_te01_estimate()
    result = solve_model(puck_model(shape), modes=3, near_hz=estimate, order=2)
    return min(result.modes, key=lambda m: abs(m.frequency_hz - estimate))


@pytest.fixture(scope="module")
def puck_in_3d():
    """The puck's TE01δ mode in 3D (spherical layer): one solve for the tests that use it."""
    return puck_mode("spherical")


def test_isolated_puck_te01_against_the_approximate_formula(puck_in_3d):
    mode = puck_in_3d
    # measured +1.0 %, inside the formula's own ±2 %
    assert abs(mode.frequency_hz / puck_te01_estimate() - 1) < 0.025
    assert 10 < mode.q_radiation < 200 and mode.absorber_energy_share < 0.05


@pytest.mark.slow
def test_the_three_layer_shapes_agree_on_the_puck():
    # one part, three layers: the complex frequency must not depend on the layer's shape
    # (measured: f within 2e-4 of each other, Q 40.8, 39.6, 38.5)
    modes = {shape: puck_mode(shape) for shape in ("spherical", "cylindrical", "cartesian")}
    f = np.array([m.frequency_hz for m in modes.values()])
    q = np.array([m.q_radiation for m in modes.values()])
    assert np.ptp(f) / f.mean() < 1e-3
    assert np.ptp(q) / q.mean() < 0.08
    assert all(abs(x / puck_te01_estimate() - 1) < 0.025 for x in f)


@pytest.mark.slow
def test_sphere_q_converges_as_the_layer_thickens_and_the_mesh_refines():
    exact = exact_sphere_mode(80.0, "TE")
    q_exact = exact.real / (2 * exact.imag)

    def errors(inside, outside, thickness):
        result = solve_model(sphere_model(80.0, "TE", inside, outside, clearance=0.02,
                                          absorber_thickness=thickness),
                             modes=3, near_hz=exact.real, order=2)
        mode = nearest(result, exact)
        return abs(mode.frequency_hz / exact.real - 1), abs(mode.q_radiation / q_exact - 1)

    # thicker layers (measured dQ: 38 %, 3.3 %, 0.09 % for 5, 10, 20 mm)
    by_thickness = [errors(0.002, 0.006, t)[1] for t in (0.005, 0.01, 0.02)]
    assert by_thickness[0] > by_thickness[1] > by_thickness[2] and by_thickness[2] < 5e-3
    # finer meshes (measured df: 6.6e-4, 2.9e-4, 1.6e-4; dQ 0.42 %, 0.09 %, 0.06 %)
    by_mesh = [errors(inside, outside, 0.02) for inside, outside in
               ((0.003, 0.008), (0.002, 0.006), (0.0015, 0.005))]
    assert by_mesh[0][0] > by_mesh[1][0] > by_mesh[2][0]
    assert by_mesh[2][1] < 3e-3


@pytest.mark.parametrize("shell", ["sphere", "cylinder", "box"])
def test_open_builder_volumes(shell):
    # the region volumes of the puck's wrapping against their solids' volumes: a curved
    # surface of radius R meshed with chords h loses at most about h²/R² of the volume it
    # bounds (sagitta h²/8R over the surface, 3h²/8R² for a ball; common practice)
    a, h, gap, depth, size = 0.004, 0.003, 0.006, 0.004, 0.0015
    mesh = build_part("puck", radius=a, height=h, clearance=gap, absorber_thickness=depth,
                      shell=shell, mesh_size=size)
    volume = {name: mesh.tet_volumes()[mesh.tet_region == rid].sum()
              for name, rid in mesh.region_names.items()}
    puck = math.pi * a**2 * h
    if shell == "sphere":
        ball = math.hypot(a, h / 2)
        inner, outer = (4 / 3 * math.pi * (ball + d) ** 3 for d in (gap, gap + depth))
        radius = ball + gap
    elif shell == "cylinder":
        inner, outer = (math.pi * (a + d) ** 2 * (h + 2 * d) for d in (gap, gap + depth))
        radius = a + gap
    else:
        inner, outer = ((2 * (a + d)) ** 2 * (h + 2 * d) for d in (gap, gap + depth))
        radius = math.inf
    bound = size**2 / a**2
    assert volume["puck"] == pytest.approx(puck, rel=bound)
    assert volume["air"] == pytest.approx(inner - puck, rel=bound + size**2 / radius**2)
    assert volume["absorber"] == pytest.approx(outer - inner, rel=2 * size**2 / radius**2
                                               + 1e-9)


def test_the_layer_is_found_from_the_mesh():
    mesh = build_part("puck", radius=0.004, height=0.003, hole_radius=0.001,
                      sizing=Sizing(size=0.004))
    model = make_model(mesh, {"puck": Material(eps_r=30.0), "air": VACUUM,
                              "absorber": AbsorbingMaterial(pml="spherical")}, {})
    (layer,) = find_layers(model)
    # the puck's defaults: clearance and thickness its largest dimension (8 mm) beyond the
    # ball of radius hypot(4, 1.5) mm around it; the mesh is faceted, hence the tolerance
    inner = math.hypot(0.004, 0.0015) + 0.008
    assert layer.inner_high[0] == pytest.approx(inner, rel=0.02)
    assert layer.depth_high[0] == pytest.approx(0.008, rel=0.05)
    assert np.linalg.norm(layer.centre) < 1e-3 * inner


def _case(tmp_path, regions: dict, solve: dict | None = None) -> dict:
    data = {"title": "Larkspur Microwave Works: open puck (made-up scenario)",
            "geometry": {"builder": "puck", "radius": "4 mm", "height": "3 mm"},
            "regions": {"puck": {"eps_r": 30}, **regions}}
    if solve:
        data["solve"] = solve
    return data


def test_case_keys_make_absorbing_regions(tmp_path):
    path = tmp_path / "open.toml"
    case = case_from_data(_case(tmp_path, {}), path)
    shell = case.regions["absorber"]           # the open builder's shell, by default
    assert isinstance(shell, AbsorbingMaterial) and shell.pml == "spherical"
    # without [solve] near: c / (n D) for the 8 mm puck at eps_r 30, a quarter and a sixth
    # of that free-space wavelength
    wavelength = math.sqrt(30.0) * 0.008
    assert case.geometry.parameters["clearance"] == pytest.approx(wavelength / 4)
    assert case.geometry.parameters["absorber_thickness"] == pytest.approx(wavelength / 6)
    assert case.mesh.region_sizes["absorber"] == pytest.approx(wavelength / 18)   # 3 across
    data = _case(tmp_path, {"absorber": {"pml_strength": 4}}, {"near": "6 GHz"})
    data["open"] = {"shape": "Cylinder", "clearance": "12 mm"}
    case = case_from_data(data, path)
    assert (case.regions["absorber"].pml, case.regions["absorber"].pml_strength) == \
        ("cylindrical", 4)
    assert case.geometry.parameters["clearance"] == pytest.approx(0.012)
    assert case.geometry.parameters["absorber_thickness"] == pytest.approx(C0 / 6e9 / 6)
    case = case_from_data(_case(tmp_path, {"absorber": {"pml": "Cartesian"}}), path)
    assert case.regions["absorber"].pml == "cartesian"
    for regions, solve, where in [
            ({"absorber": {"pml": "conical"}}, None, "regions.absorber.pml"),
            ({"air": {"pml_strength": 2}}, None, "regions.air.pml_strength"),
            ({"absorber": {"pml_strength": -1}}, None, "regions.absorber.pml_strength"),
            ({"absorber": {"pml": "spherical", "eps_r": "1 + x"}}, None,
             "regions.absorber.eps_r"),
            ({}, {"error_estimate": True}, "solve.error_estimate")]:
        with pytest.raises(InputError) as error:
            case_from_data(_case(tmp_path, regions, solve), path)
        assert error.value.field == where, (regions, str(error.value))
    closed = {"geometry": {"builder": "pillbox", "radius": "10 mm", "length": "10 mm"},
              "open": {"clearance": "5 mm"}}
    with pytest.raises(InputError, match="open builder") as error:
        case_from_data(closed, path)
    assert error.value.field == "open"
    with pytest.raises(InputError) as error:
        case_from_data({**_case(tmp_path, {}), "open": {"shape": "cone"}}, path)
    assert error.value.field == "open.shape"
    # on a section: the sphere and cylinder shells are bodies of revolution, a box is not
    data = _case(tmp_path, {}, {"azimuthal_orders": [0]})
    case = case_from_data({**data, "open": {"shape": "cylinder"}}, path)
    assert case.regions["absorber"].pml == "cylindrical"
    with pytest.raises(InputError, match="no body of revolution") as error:
        case_from_data({**data, "open": {"shape": "box"}}, path)
    assert error.value.field == "open.shape"


def test_open_results_in_the_table_json_csv_and_fields(tmp_path):
    import json

    import meshio

    from femcav.io.vtk import write_vtu

    from femcav.io.results import to_csv, to_json, to_table

    exact = exact_sphere_mode(36.0, "TE")
    result = solve_model(sphere_model(36.0, "TE", 0.004, 0.01), modes=4, order=2,
                         near_hz=exact.real * 1.02)
    assert result.layer_modes                      # measured: 3 of 4 near this target
    heading = to_table(result).splitlines()[0]
    assert "Q rad" in heading
    document = json.loads(to_json(result, title="open", case=None))
    (mode,) = document["modes"]
    f = complex(*mode["complex_frequency_hz"])
    assert mode["q_radiation"] == pytest.approx(f.real / (2 * f.imag))
    assert 0 < mode["absorber_energy_share"] < LAYER_SHARE_LIMIT
    assert len(document["layer_modes"]) == len(result.layer_modes)
    assert all(m["absorber_energy_share"] > LAYER_SHARE_LIMIT for m in document["layer_modes"])
    header, row = to_csv(result).splitlines()[:2]
    values = dict(zip(header.split(","), row.split(",")))
    assert float(values["q_radiation"]) == pytest.approx(mode["q_radiation"])
    # fields.vtu: the complex mode at the instant its strongest cell value is real, the
    # energy densities from |E|² (positive), the layer marked
    write_vtu(result, tmp_path / "fields.vtu")
    cells = meshio.read(tmp_path / "fields.vtu").cell_data
    layer = result.space.model.mesh.tet_region == result.space.model.mesh.region_names[
        "absorber"]
    assert np.array_equal(cells["absorber"][0], layer.astype(int))
    assert not np.iscomplexobj(cells["m01_E"][0]) and np.all(cells["m01_we"][0] >= 0)


# --- Bodies of revolution: the same open parts on their meridional section -----------------
# (axisymmetric.absorber: the stretch seen on the (r, z) half-plane). The sphere's n = 1
# modes are three-fold degenerate: along z they are m = 0 (TE: E_φ alone; TM: H_φ alone),
# across z the pair m = 1 (Stratton, Electromagnetic Theory, 1941, §9.22: the dipole fields).

def section_sphere(eps_r: float, inside=0.002, outside=0.006, clearance=0.02,
                   thickness=0.02, absorber: Material | None = None, shell="sphere"):
    from femcav.axisymmetric.model import make_axisymmetric_model
    from femcav.geometry import builder_layout
    from femcav.geometry.section import mesh_section

    sizes = {"sphere": inside, "absorber": min(outside, thickness / 3)}
    section = mesh_section(builder_layout("sphere", {
        "radius": RADIUS, "clearance": clearance, "absorber_thickness": thickness,
        "shell": shell}),
        Sizing(size=outside, region_sizes=sizes, curved=True))
    layer = absorber if absorber is not None else AbsorbingMaterial(pml="spherical")
    return make_axisymmetric_model(section, {"sphere": Material(eps_r=eps_r), "air": VACUUM,
                                             "absorber": layer}, {})


def solve_section(model, **options):
    from femcav.axisymmetric.solve import solve_axisymmetric

    return solve_axisymmetric(model, **{"order": 3, **options})


def nearest_of_order(modes, m: int, f_exact: complex):
    return min((x for x in modes if x.m == m), key=lambda x: abs(x.complex_frequency_hz
                                                                  - f_exact))


# Order 3 on curved triangles, 2 mm in the sphere, 6 mm outside, clearance and layer 20 mm
# each, default strength; measured (df, dQ): 36 TE m=0 (+5e-6, +7e-5), m=1 (+3e-6, +4e-5);
# 36 TM (+5e-7, -7e-5); 80 TE (+6e-6, -6.1e-4); 80 TM m=0 (+1e-6, -1.1e-4), m=1 (+3e-6,
# -1.5e-4); H form 36 TE (-1.7e-6, -2.4e-5).
@pytest.mark.parametrize("eps_r, kind, orders, form", [
    (36.0, "TE", (0, 1), "E"), (36.0, "TM", (0,), "E"), (80.0, "TE", (0,), "E"),
    (80.0, "TM", (0, 1), "E"), (36.0, "TE", (0,), "H")])
def test_dielectric_sphere_on_its_section_against_the_exact_complex_resonance(eps_r, kind,
                                                                              orders, form):
    exact = exact_sphere_mode(eps_r, kind)
    q_exact = exact.real / (2 * exact.imag)
    result = solve_section(section_sphere(eps_r), orders=orders, modes=2 * len(orders),
                           near_hz=exact.real, form=form)
    for m in orders:
        mode = nearest_of_order(result.modes, m, exact)
        # issue 19 asks 1e-4; 3e-5 also catches a frequency taken from Re k0² instead of
        # Re f (they differ by 1/(8 Q²): 6.7e-5 at Q = 43)
        assert abs(mode.frequency_hz / exact.real - 1) < 3e-5
        assert abs(mode.q_radiation / q_exact - 1) < 0.01                # issue 19's 1 %
        assert mode.q_radiation == mode.q_eigenvalue
        assert mode.absorber_energy_share < 0.05 and mode.checks.passed
        if m == 0:
            assert mode.field_class == {"TE": "TE-like", "TM": "TM-like"}[kind]


def test_section_q_converges_as_the_layer_thickens():
    # the eps_r 80 TE mode, order 3 (measured dQ: -37 %, -5.8 %, -0.06 % for 5, 10, 20 mm;
    # the layer's reflection falls as exp(-2 σ k d), fem.absorber)
    exact = exact_sphere_mode(80.0, "TE")
    errors = []
    for thickness in (0.005, 0.01, 0.02):
        mode = nearest_of_order(solve_section(section_sphere(80.0, thickness=thickness),
                                              orders=(0,), modes=2,
                                              near_hz=exact.real).modes, 0, exact)
        errors.append(abs(mode.q_radiation / (exact.real / (2 * exact.imag)) - 1))
    assert errors[0] > errors[1] > errors[2] and errors[2] < 2e-3


def test_section_frequency_and_q_converge_as_the_mesh_refines():
    # order 2, sizes halved (measured df: 3.7e-3, 2.9e-4, 3.8e-5; dQ 1.7 %, 0.14 %, 0.06 %)
    exact = exact_sphere_mode(80.0, "TE")
    errors = []
    for inside, outside in ((0.004, 0.012), (0.002, 0.006), (0.001, 0.003)):
        mode = nearest_of_order(solve_section(section_sphere(80.0, inside, outside),
                                              orders=(0,), modes=2, near_hz=exact.real,
                                              order=2).modes, 0, exact)
        errors.append((abs(mode.frequency_hz / exact.real - 1),
                       abs(mode.q_radiation / (exact.real / (2 * exact.imag)) - 1)))
    assert errors[0][0] > 4 * errors[1][0] > 16 * errors[2][0]
    assert errors[0][1] > errors[1][1] > errors[2][1] and errors[2][1] < 2e-3


def section_puck(shell: str):
    """The puck of the 3D tests on its section: the same air and layer (10 mm each)."""
    from femcav.axisymmetric.model import make_axisymmetric_model
    from femcav.geometry import builder_layout
    from femcav.geometry.section import mesh_section

    section = mesh_section(builder_layout("puck", {
        **PUCK, "clearance": 0.01, "absorber_thickness": 0.01, "shell": shell}),
        Sizing(size=0.005, region_sizes={"puck": 0.002}, curved=True))
    shape = {"sphere": "spherical", "cylinder": "cylindrical"}[shell]
    return make_axisymmetric_model(section, {"puck": Material(eps_r=PUCK_EPS), "air": VACUUM,
                                             "absorber": AbsorbingMaterial(pml=shape)}, {})


def section_puck_mode(shell: str):
    estimate = puck_te01_estimate()
    result = solve_section(section_puck(shell), orders=(0,), modes=3, near_hz=estimate)
    return min(result.modes, key=lambda m: abs(m.frequency_hz - estimate))


def test_isolated_puck_on_its_section_against_the_formula_and_3d(puck_in_3d):
    mode = section_puck_mode("sphere")
    assert mode.field_class == "TE-like"                        # TE01δ: E_φ alone
    # Kajfez and Guillon's ±2 % (measured +0.82 %)
    assert abs(mode.frequency_hz / puck_te01_estimate() - 1) < 0.025
    # the 3D solve of the same part, order 2, within issue 19's 3D tolerances of the far
    # finer section (measured: 3D f 0.21 % above, Q 0.95 % above)
    assert abs(puck_in_3d.frequency_hz / mode.frequency_hz - 1) < 1e-2
    assert abs(puck_in_3d.q_radiation / mode.q_radiation - 1) < 0.05


def test_a_cylindrical_layer_on_a_section():
    # the sphere in a can-shaped layer (r stretched beyond its side, z beyond its caps, both
    # in its corners): the TM mode (E in the meridional plane, so every entry of the 2x2
    # tensor acts) against the exact root to the 1e-4 and 1 % (measured +1.3e-7,
    # -1.0e-4)
    exact = exact_sphere_mode(36.0, "TM")
    model = section_sphere(36.0, absorber=AbsorbingMaterial(pml="cylindrical"),
                           shell="cylinder")
    mode = nearest_of_order(solve_section(model, orders=(0,), modes=2,
                                          near_hz=exact.real).modes, 0, exact)
    assert abs(mode.frequency_hz / exact.real - 1) < 1e-4
    assert abs(mode.q_radiation / (exact.real / (2 * exact.imag)) - 1) < 0.01


def test_a_closed_sphere_on_its_section_through_the_complex_path():
    # the sphere in a PEC ball of radius b = 50 mm (the shell plain air): its TE mode from
    # the characteristic equation of the closed problem, E_φ ∝ j1(k1 r) inside and
    # ∝ y1(k0 b) j1(k0 r) - j1(k0 b) y1(k0 r) outside (zero at b), tangential E and H
    # continuous at a (Stratton, 1941, §9.22; scipy's spherical Bessel functions, brentq).
    # The complex-symmetric path (losses inside, no loss) must give the same mode with a
    # Q beyond 1e8: no radiation from a closed part.
    from scipy.optimize import brentq

    from femcav.post.radiation import radiation_q

    a, b, eps_r = RADIUS, 0.05, 36.0

    def ratio(f, x):       # [x f(x)]' / f(x)
        return (f(x) + x * f(x, True)) / f(x)

    def characteristic(k0):
        outer = lambda x, d=False: (spherical_yn(1, k0 * b) * spherical_jn(1, x, d)
                                    - spherical_jn(1, k0 * b) * spherical_yn(1, x, d))
        inner = lambda x, d=False: spherical_jn(1, x, d)
        return ratio(inner, math.sqrt(eps_r) * k0 * a) - ratio(outer, k0 * a)

    open_guess = exact_sphere_mode(eps_r, "TE").real * 2 * math.pi / C0
    k0 = brentq(characteristic, 0.97 * open_guess, 1.03 * open_guess)   # measured: one root
    f_closed = C0 * k0 / (2 * math.pi)
    model = section_sphere(eps_r, absorber=VACUUM)
    real = min(solve_section(model, orders=(0,), modes=2, near_hz=f_closed).modes,
               key=lambda x: abs(x.frequency_hz - f_closed))
    assert real.frequency_hz == pytest.approx(f_closed, rel=2e-5)     # measured +4.4e-6
    lossless = nearest_of_order(solve_section(model, orders=(0,), modes=2, near_hz=f_closed,
                                              losses_inside=True).modes, 0, f_closed)
    assert lossless.frequency_hz == pytest.approx(real.frequency_hz, rel=1e-9)
    assert radiation_q(lossless, losses_inside=True) > 1e8


def test_a_section_finds_its_layers():
    from femcav.axisymmetric.absorber import find_section_layers

    a, h = PUCK["radius"], PUCK["height"]
    (can,) = find_section_layers(section_puck("cylinder"))
    assert can.shape == "cylindrical" and np.allclose(can.centre, 0)
    assert can.inner_high[:2] == pytest.approx([a + 0.01, h / 2 + 0.01], rel=1e-9)
    assert can.inner_low[1] == pytest.approx(-h / 2 - 0.01, rel=1e-9)
    assert can.depth_high[:2] == pytest.approx([0.01, 0.01], rel=1e-9)
    assert can.depth_low[1] == pytest.approx(0.01, rel=1e-9)
    (ball,) = find_section_layers(section_puck("sphere"))
    assert ball.inner_high[0] == pytest.approx(math.hypot(a, h / 2) + 0.01, rel=1e-6)
    assert ball.depth_high[0] == pytest.approx(0.01, rel=1e-6)
    assert abs(ball.centre[2]) < 1e-9
    # a box is no body of revolution: refused on a section
    from femcav.geometry import builder_layout
    from femcav.geometry.section import mesh_section

    with pytest.raises(InputError, match="not a body of revolution"):
        mesh_section(builder_layout("puck", {**PUCK, "shell": "box"}), Sizing(size=0.004))


def test_stretch_on_a_section_is_the_3d_stretch_in_its_frame():
    # Λ of a spherical layer in the (r̂, φ̂, ẑ) frame: (ρ̃²/(ρ² s)) ρ̂ρ̂ᵀ + s (I - ρ̂ρ̂ᵀ)
    # (Teixeira and Chew 1997), so Λ_t/det Λ_t and 1/Λ_φφ = 1/s (stiffness) and Λ_t, s
    # (mass) at a point of the layer
    from femcav.axisymmetric.absorber import find_section_layers, section_stretch
    from femcav.axisymmetric.space import build_order_space

    model = section_puck("sphere")
    space = build_order_space(model, 0, 2)
    stretch = section_stretch(model, space.edge_basis)
    (layer,) = find_section_layers(model)
    x = space.edge_basis.mapping.F(space.edge_basis.X)
    rho = np.hypot(x[0], x[1])
    deep = np.unravel_index(np.argmax(rho), rho.shape)      # the point deepest in the layer
    r, z, dist = x[0][deep], x[1][deep], rho[deep]
    xi = (dist - layer.inner_high[0]) / layer.depth_high[0]
    s = 1 - 3j * layer.strength * xi**2
    rho_t = dist - 1j * layer.strength * layer.depth_high[0] * xi**3
    unit = np.array([r, z]) / dist
    lam = rho_t**2 / (dist**2 * s) * np.outer(unit, unit) + s * (np.eye(2)
                                                                 - np.outer(unit, unit))
    assert np.allclose(stretch.mass_rz[(slice(None), slice(None), *deep)], lam, rtol=1e-12)
    assert stretch.mass_phi[deep] == pytest.approx(s, rel=1e-12)
    assert np.allclose(stretch.stiffness_rz[(slice(None), slice(None), *deep)],
                       lam / np.linalg.det(lam), rtol=1e-12)
    assert stretch.stiffness_phi[deep] == pytest.approx(1 / s, rel=1e-12)
    # outside the layer: the identity
    air = model.section.tri_region != model.section.region_names["absorber"]
    assert np.allclose(stretch.mass_rz[:, :, air], np.eye(2)[:, :, None, None])


def test_open_section_case_default_target_layer_modes_and_layer_check(tmp_path, capsys):
    from femcav.axisymmetric.runner import solve_axisymmetric_case
    from femcav.progress import Progress

    data = {"title": "Larkspur Microwave Works: ceramic sphere on its section (made-up "
                     "scenario)",
            "geometry": {"builder": "sphere", "radius": "10 mm"},
            "mesh": {"size": "6 mm", "curved": True},
            "regions": {"sphere": {"eps_r": 36, "mesh_size": "3 mm"}},
            "open": {"shape": "sphere"},
            "solve": {"azimuthal_orders": [0], "modes": 4, "layer_check": True}}
    case = case_from_data(data, tmp_path / "sphere.toml")
    result = solve_axisymmetric_case(case, case.solve, Progress())
    err = capsys.readouterr().err
    assert "open problem without [solve] near: looking near" in err
    assert "spherical layer" in err and "layer check:" in err
    exact = {kind: exact_sphere_mode(36.0, kind) for kind in ("TE", "TM")}
    # c / (n D) for the 20 mm sphere at eps_r 36, within 3 % of the TE mode (k1 a = 3.07)
    assert abs(result.near_hz / exact["TE"].real - 1) < 0.03
    for kind, f in exact.items():    # both dipole modes in the table, to the 1e-4
        mode = nearest_of_order(result.modes, 0, f)
        assert abs(mode.frequency_hz / f.real - 1) < 1e-4
    assert len(result.modes) + len(result.layer_modes) == 4
    assert all(m.absorber_energy_share <= LAYER_SHARE_LIMIT for m in result.modes)
    assert result.layer_modes and all(
        m.absorber_energy_share > LAYER_SHARE_LIMIT for m in result.layer_modes)
    # fields.vtu of a section (revolved): the layer marked as in 3D
    import meshio

    from femcav.axisymmetric.revolve import write_revolved_vtu

    write_revolved_vtu(result, tmp_path / "fields.vtu")
    cells = meshio.read(tmp_path / "fields.vtu").cell_data
    section = result.mesh
    layer = section.tri_region == section.region_names["absorber"]
    assert np.array_equal(cells["absorber"][0][:layer.size], layer.astype(int))
