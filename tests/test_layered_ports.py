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
