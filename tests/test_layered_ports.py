"""Hybrid modes of a layered port face (femcav.ports.layered_face): the dominant mode of a
rectangular guide partially filled by a dielectric slab on its broad wall against the
transcendental equation of its LSM family (solved here with brentq), and on a homogeneous
face the TE and TM propagation constants and wave admittances of the closed forms."""

import cmath
import math

import numpy as np
import pytest
from scipy.optimize import brentq

from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.ports.layered_face import layered_face
from femcav.ports.port_system import port_face
from femcav.walls import Wall

A, B = 0.02286, 0.01016           # WR-90 (common practice)
K0 = 2 * math.pi * 10e9 / 299792458.0


def _k_tan(k_squared, length):
    """k tan(k l) for real k², continued to k = jκ as −κ tanh(κ l) (real either way)."""
    if k_squared >= 0:
        k = math.sqrt(k_squared)
        return k * math.tan(k * length)
    kappa = math.sqrt(-k_squared)
    return -kappa * math.tanh(kappa * length)


def lsm_beta_squared(k0, eps, thickness):
    """β² of the dominant mode of the guide a x b with a slab of ε_r, 0 ≤ y ≤ t, across the
    whole width. Its fields follow from an electric potential along y, ψ(y) sin(πx/a)
    e^{−jβz} (LSM to y, the continuation of TE10): ψ = cos(k_d y) in the slab and
    cos(k_a (b − y)) above (E_x, E_z ∝ ∂ψ/∂y vanish on the walls), with ε ψ and ∂ψ/∂y
    continuous at y = t:  (k_d/ε_r) tan(k_d t) + k_a tan(k_a (b − t)) = 0,
    k_d² = ε_r k0² − (π/a)² − β², k_a² = k0² − (π/a)² − β² (Collin, Field Theory of Guided
    Waves, 2nd ed., ch. 6; Harrington, Time-Harmonic Electromagnetic Fields, §4-6; both
    from memory). The largest root lies between the empty and the filled guide's β²."""
    kx2 = (math.pi / A) ** 2

    def mismatch(beta_squared):
        return (_k_tan(eps * k0**2 - kx2 - beta_squared, thickness) / eps
                + _k_tan(k0**2 - kx2 - beta_squared, B - thickness))

    grid = np.linspace(eps * k0**2 - kx2, k0**2 - kx2, 4001)[1:-1]
    values = np.array([mismatch(g) for g in grid])
    for hi, lo, v_hi, v_lo in zip(grid, grid[1:], values, values[1:]):
        # a sign change that is a root, not a pole of tan (finite values on both sides)
        if v_hi * v_lo < 0 and abs(v_hi) + abs(v_lo) < 1e4 * K0:
            return brentq(mismatch, lo, hi, xtol=1e-12)
    raise AssertionError("no root")


def test_dominant_mode_of_a_partially_filled_guide_follows_the_lsm_equation():
    eps, thickness = 4.0, 0.004
    mesh = build_part("loaded_box", mesh_size=0.002, width=A, height=B, length=0.004,
                      block_corner=(0, 0, 0), block_size=(A, thickness, 0.004))
    space = build_space(make_model(mesh, {"air": Material(), "block": Material(eps_r=eps)},
                                   {"z_max": Wall("port")}), "E", 2)
    face = port_face(space, "z_max", 1)        # two materials behind it: a layered face
    beta_squared, _, _ = face.modes_at(K0**2)
    exact = lsm_beta_squared(K0, eps, thickness)
    # the slab pulls β² far above the empty guide's (k0² − (π/a)² = 25 037 /m²)
    assert exact > 2 * (K0**2 - (math.pi / A) ** 2)
    # measured 1.1e-4 at 2 mm, order 2
    assert beta_squared[0] == pytest.approx(exact, rel=1e-3)
    port = face.port_at(K0**2)
    assert port.kinds[0] == "hybrid" and port.propagates(K0**2, 0)
    # dβ²/dk0² from the tangent against a finite difference of the equation itself
    step = 1e-4 * K0**2
    slope = (lsm_beta_squared(math.sqrt(K0**2 + step), eps, thickness) - exact) / step
    assert port.hybrid.beta_squared_slope[0] == pytest.approx(slope, rel=1e-2)


def test_hybrid_formulation_on_a_homogeneous_face_gives_te_and_tm_admittances():
    # On one material the hybrid pencil gives the TE and TM modes: β² = k² − k_c² and
    # y = ωμ0 Y = β/μ_r (TE), k0² ε_r/β (TM) (Pozar, Microwave Engineering, 4th ed.,
    # §3.1, §3.3); at 20 GHz in WR-90: TE10, TE20, TE01, then TE11 and TM11 (degenerate)
    eps = 2.0
    k0 = 2 * K0
    mesh = build_part("box", mesh_size=0.003, width=A, height=B, length=0.004)
    space = build_space(make_model(mesh, {"inside": Material(eps_r=eps)},
                                   {"z_max": Wall("port")}), "E", 2)
    port = layered_face(space, "z_max", 5).port_at(k0**2)
    k_squared = eps * k0**2
    cutoffs = [(math.pi / A) ** 2, (2 * math.pi / A) ** 2, (math.pi / B) ** 2]
    assert port.hybrid.beta_squared[:3] == pytest.approx([k_squared - c for c in cutoffs],
                                                         rel=1e-3)
    betas = [cmath.sqrt(k_squared - c) for c in cutoffs]
    assert port.hybrid.y[:3] == pytest.approx(betas, rel=1e-3)
    # TE11 and TM11 share β; their admittances are β and k0² ε_r/β, in either order
    beta11 = math.sqrt(k_squared - (math.pi / A) ** 2 - (math.pi / B) ** 2)
    assert sorted(port.hybrid.y[3:5].real) == pytest.approx(
        [beta11, k0**2 * eps / beta11], rel=2e-3)


# A layered guide whose modes keep their shape across a junction: WR-90 with a slab of
# ε_r 2 on its narrow wall (0 ≤ x ≤ 6 mm, full height). Its TE_m0 modes, E = y E_y(x)
# e^{−jβz}, have k_x² = ε_r k0² − β² in each layer; raising both layers' ε_r by the same Δ
# keeps every k_x and so the profile, and only moves β² by Δ k0². A section with ε_r + Δ is
# then a pure impedance step for the dominant mode (no other mode is excited), and the
# resonator short / guide / raised section / guide / matched port is a transmission line
# (Z ∝ 1/β for a TE mode; Pozar, Microwave Engineering, 4th ed., §2.4, §3.1, §4.4).
SLAB_X, EPS_SLAB, DELTA = 0.006, 2.0, 5.0
SECTIONS = (0.018, 0.003, 0.005)


def _sinc_length(k, length):
    return cmath.sin(k * length) / k if abs(k * length) > 1e-8 else length


def te_profile_mismatch(beta_squared, k0):
    """Zero for a TE_m0 mode: E_y = sin(k_1 x) in the slab, sin(k_2 (a − x)) beyond, E_y and
    ∂E_y/∂x continuous at x = t: cos(k_1 t) sin(k_2 l)/k_2 + sin(k_1 t)/k_1 cos(k_2 l) = 0,
    l = a − t (Collin, Field Theory of Guided Waves, 2nd ed., ch. 6, from memory; written
    free of poles and even in k_1, k_2)."""
    k1 = cmath.sqrt(EPS_SLAB * k0**2 - beta_squared)
    k2 = cmath.sqrt(k0**2 - beta_squared)
    length = A - SLAB_X
    return (cmath.cos(k1 * SLAB_X) * _sinc_length(k2, length)
            + _sinc_length(k1, SLAB_X) * cmath.cos(k2 * length))


def layered_line_resonance(f_guess):
    """(complex f, β² of the guide there): the short sees V = 0 for a wave that only leaves
    through the port; the profile equation and the line solved together for (k0, β²) by
    Newton's method with a difference Jacobian."""
    def section(beta_squared, length):
        beta = cmath.sqrt(beta_squared)
        return np.array([[cmath.cos(beta * length), 1j * cmath.sin(beta * length) / beta],
                         [1j * beta * cmath.sin(beta * length), cmath.cos(beta * length)]])

    def equations(x):
        k0, beta_squared = x
        wave = np.array([1.0, cmath.sqrt(beta_squared)])        # I = V/Z, Z ∝ 1/β
        v = (section(beta_squared, SECTIONS[0])
             @ section(beta_squared + DELTA * k0**2, SECTIONS[1]) @ wave)[0]
        return np.array([te_profile_mismatch(beta_squared, k0), v])

    k0 = 2 * math.pi * f_guess / 299792458.0
    grid = np.linspace(EPS_SLAB * k0**2 * (1 - 1e-9), 0.0, 2001)
    values = [te_profile_mismatch(g, k0).real for g in grid]
    i = next(i for i in range(grid.size - 1) if values[i] * values[i + 1] < 0)
    x = np.array([k0 * (1 + 0.01j), brentq(lambda b: te_profile_mismatch(b, k0).real,
                                            grid[i + 1], grid[i])], dtype=complex)
    for _ in range(100):
        f0 = equations(x)
        jacobian = np.empty((2, 2), dtype=complex)
        for j in range(2):
            step = np.zeros(2, dtype=complex)
            step[j] = 1e-7 * abs(x[j])
            jacobian[:, j] = (equations(x + step) - f0) / step[j]
        change = np.linalg.solve(jacobian, -f0)
        x = x + change
        if abs(change[0]) < 1e-13 * abs(x[0]):
            return complex(299792458.0 * x[0] / (2 * math.pi)), x[1]
    raise AssertionError("no convergence")


@pytest.mark.slow
def test_a_resonator_in_a_layered_guide_with_a_matched_layered_port(tmp_path):
    # (slow: 6.4k DOFs, 25 s on the loaded 2-core machine; the 3 mm raised section sets
    # the element size)
    from conftest import box_with_blocks

    from femcav.geometry import read_mesh
    from femcav.ports.loaded_solve import solve_with_ports

    exact, _ = layered_line_resonance(10e9)
    q_exact = exact.real / (2 * exact.imag)
    assert 10 < q_exact < 50           # 23.2 at 9.937 GHz
    l1, d, l3 = SECTIONS
    path = box_with_blocks(tmp_path / "layered.msh", (A, B, l1 + d + l3),
                           {"slab_1": (0, 0, 0, SLAB_X, B, l1),
                            "raised_slab": (0, 0, l1, SLAB_X, B, d),
                            "raised_air": (SLAB_X, 0, l1, A - SLAB_X, B, d),
                            "slab_3": (0, 0, l1 + d, SLAB_X, B, l3)}, 0.005)
    materials = {"air": Material(), "slab_1": Material(eps_r=EPS_SLAB),
                 "slab_3": Material(eps_r=EPS_SLAB),
                 "raised_slab": Material(eps_r=EPS_SLAB + DELTA),
                 "raised_air": Material(eps_r=1 + DELTA)}
    model = make_model(read_mesh(path), materials, {"z_max": Wall("port")})
    (mode,) = solve_with_ports(model, modes=1, near_hz=exact.real, order=2).modes
    assert mode.checks.passed
    # 5 mm, order 2: measured f +1.2e-4, Q_ext +0.43 %
    assert mode.frequency_hz == pytest.approx(exact.real, rel=2e-3)
    assert mode.loading.q_external["z_max"] == pytest.approx(q_exact, rel=0.03)
