"""Cavities with μ_r ≠ 1, in both field forms, against closed forms: a filled box, and a box
layered along z (two different media, both lossy and magnetic) whose TE_m0p modes follow
from a transverse-resonance condition solved with brentq. The layered box also checks the
dielectric Q (filling factors of two lossy regions) and the material sensitivities against
derivatives of the same condition, so that none of these checks holds for any field."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.constants import c
from scipy.integrate import quad
from scipy.optimize import brentq

from femcav.analytic.box import lowest_box_frequencies
from femcav.cli import main
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.post.sensitivity import material_sensitivities
from femcav.solver import solve_model
from test_loaded import y_polarised

A, B, D = 0.02286, 0.01016, 0.030      # WR-90 cross-section, 30 mm long
T = 0.012                              # the first layer fills 0 <= z <= T
EPS, MU, TAN = (3.0, 1.5), (2.0, 1.3), (1e-3, 2e-4)   # (layer, rest), made-up media


@pytest.mark.parametrize("form", ["E", "H"])
def test_filled_box_is_the_empty_box_over_root_eps_mu(form):
    # f = f_vacuum / sqrt(ε_r μ_r) (Pozar, Microwave Engineering, 4th ed., §6.3, from
    # memory; femcav.analytic.box). Order 2 at 4 mm: measured errors below 3e-4.
    mesh = build_part("box", width=0.02, height=0.01, length=0.025, mesh_size=0.004)
    result = solve_model(make_model(mesh, {"inside": Material(eps_r=4.0, mu_r=2.0)}, {}),
                         modes=4, form=form, order=2)
    exact = lowest_box_frequencies(0.02, 0.01, 0.025, 4, eps_r=4.0, mu_r=2.0)
    np.testing.assert_allclose([m.frequency_hz for m in result.modes], exact, rtol=2e-3)


# --- the layered box: E = ŷ sin(mπx/a) g(z) ----------------------------------------------
#
# In layer i, g'' + β_i² g = 0 with β_i² = ε_i μ_i k0² - (mπ/a)²; g(0) = g(d) = 0, and at
# z = t the tangential E_y ∝ g and H_x ∝ g'/μ are continuous. With S(β, s) = sin(βs)/β and
# C(β, s) = cos(βs) (sinh and cosh for β² < 0), g = S(β_2, d - t) S(β_1, z) below t and
# S(β_1, t) S(β_2, d - z) above, and
#     C(β_1, t) S(β_2, d - t) + (μ_1/μ_2) S(β_1, t) C(β_2, d - t) = 0,
# the transverse resonance of a slab-loaded guide along its axis (Pozar, Microwave
# Engineering, 4th ed., §3.3 and §6.3 for the end walls; from memory).

def _s(b2, s):
    if b2 > 0:
        return math.sin(math.sqrt(b2) * s) / math.sqrt(b2)
    return math.sinh(math.sqrt(-b2) * s) / math.sqrt(-b2) if b2 < 0 else s


def _c(b2, s):
    return math.cos(math.sqrt(b2) * s) if b2 >= 0 else math.cosh(math.sqrt(-b2) * s)


def _betas(k0, m, eps, mu):
    kx = m * math.pi / A
    return eps[0] * mu[0] * k0**2 - kx**2, eps[1] * mu[1] * k0**2 - kx**2


def layered_condition(k0, m, eps, mu, t=T):
    b1, b2 = _betas(k0, m, eps, mu)
    return _c(b1, t) * _s(b2, D - t) + mu[0] / mu[1] * _s(b1, t) * _c(b2, D - t)


def layered_k0(m, eps, mu, count):
    """The lowest ``count`` roots k0 (rad/m) of family m, by a scan and brentq."""
    grid = np.linspace(1.0, 1500.0, 3000)
    values = [layered_condition(k, m, eps, mu) for k in grid]
    roots = [brentq(layered_condition, k1, k2, args=(m, eps, mu), xtol=1e-13)
             for k1, k2, v1, v2 in zip(grid[:-1], grid[1:], values[:-1], values[1:])
             if v1 * v2 < 0]
    return roots[:count]


def layered_frequency(m, eps, mu, near_k0, t=T):
    """The root next to ``near_k0`` for slightly changed media or layer, in Hz."""
    k = brentq(layered_condition, 0.99 * near_k0, 1.01 * near_k0, args=(m, eps, mu, t),
               xtol=1e-13)
    return c * k / (2 * math.pi)


def first_layer_filling_factor(k0, m, eps, mu):
    """ε_1 ∫_0^t g² / (ε_1 ∫_0^t g² + ε_2 ∫_t^d g²): the sin²(mπx/a) factor and the y extent
    are common to both layers and cancel (scipy.integrate.quad)."""
    b1, b2 = _betas(k0, m, eps, mu)
    lower = quad(lambda z: (_s(b2, D - T) * _s(b1, z)) ** 2, 0, T)[0]
    upper = quad(lambda z: (_s(b1, T) * _s(b2, D - z)) ** 2, T, D)[0]
    return eps[0] * lower / (eps[0] * lower + eps[1] * upper)


def derivative(m, k0, which, layer):
    """df/dε or df/dμ of one layer, by a central difference of the condition's root."""
    step, values = 1e-5, []
    for sign in (1, -1):
        media = {"eps": list(EPS), "mu": list(MU)}
        media[which][layer] += sign * step
        values.append(layered_frequency(m, media["eps"], media["mu"], k0))
    return (values[0] - values[1]) / (2 * step)


def layered_reference(count=3):
    """(k0, m) of the lowest TE_m0p modes, m = 1 and 2."""
    return sorted((k, m) for m in (1, 2) for k in layered_k0(m, EPS, MU, count))[:count]


def layered_materials():
    return {"block": Material(eps_r=EPS[0], mu_r=MU[0], tan_delta=TAN[0]),
            "air": Material(eps_r=EPS[1], mu_r=MU[1], tan_delta=TAN[1])}


@pytest.fixture(scope="module")
def layered_mesh():
    # The builder's block fills the whole cross-section up to z = T; its other region keeps
    # the builder's name "air" but holds the second medium.
    return build_part("loaded_box", width=A, height=B, length=D, block_corner=(0, 0, 0),
                      block_size=(A, B, T), mesh_size=0.004)


@pytest.mark.parametrize("form", ["E", "H"])
def test_layered_magnetic_box_frequencies_q_and_sensitivities(layered_mesh, form):
    # Order 2 at 4 mm (measured): frequencies within 5e-4, Q_d within 3e-3, the
    # sensitivities within 8e-3 of the closed form's.
    result = solve_model(make_model(layered_mesh, layered_materials(), {}), modes=4,
                         form=form, order=2)
    reference = layered_reference()
    computed = y_polarised(result)
    assert len(computed) == len(reference)
    np.testing.assert_allclose(computed, [c * k / (2 * math.pi) for k, _ in reference],
                               rtol=1.5e-3)
    by_frequency = {m.frequency_hz: m for m in result.modes}
    for f, (k0, m) in zip(computed, reference):
        mode = by_frequency[f]
        p = first_layer_filling_factor(k0, m, EPS, MU)
        # 1/Q_d = Σ p_i tan δ_i (Pozar §6.3 / §6.7; common practice)
        assert mode.losses.q_dielectric == pytest.approx(
            1 / (p * TAN[0] + (1 - p) * TAN[1]), rel=1e-2)
        assert mode.losses.filling_factor["block"] == pytest.approx(p, rel=1e-2)
        s = material_sensitivities(result.space, mode.dofs, mode.frequency_hz)
        for which, key in (("eps", "eps_r"), ("mu", "mu_r")):
            for layer, region in enumerate(("block", "air")):
                assert getattr(s, key)[region] == pytest.approx(derivative(m, k0, which, layer),
                                                       rel=2e-2), (which, region)


def test_case_file_sensitivities_and_tolerance_of_the_layered_box(tmp_path):
    # Also an indexed tolerance key: block_size[2] is the layer's thickness t, whose
    # derivative df/dt comes from the same condition (measured agreement 3e-4).
    case = tmp_path / "layered.toml"
    case.write_text(f"""
title = "Made-up layered ferrite test box"
[geometry]
builder = "loaded_box"
width = "{A * 1e3} mm"
height = "{B * 1e3} mm"
length = "{D * 1e3} mm"
block_corner = [0, 0, 0]
block_size = ["{A * 1e3} mm", "{B * 1e3} mm", "{T * 1e3} mm"]
[regions.block]
eps_r = {EPS[0]}
mu_r = {MU[0]}
[regions.air]
eps_r = {EPS[1]}
mu_r = {MU[1]}
[mesh]
size = "4 mm"
[solve]
modes = 1
order = 2
sensitivities = true
[tolerances]
"block_size[2]" = "10 um"
""")
    assert main(["solve", str(case), "--out", str(tmp_path / "out"), "-q", "--no-report"]) == 0
    mode = json.loads((tmp_path / "out" / "modes.json").read_text())["modes"][0]
    k0, m = layered_reference(1)[0]
    assert mode["frequency_hz"] == pytest.approx(c * k0 / (2 * math.pi), rel=1.5e-3)
    for which, key in (("eps", "eps_r"), ("mu", "mu_r")):
        for layer, region in enumerate(("block", "air")):
            assert mode["sensitivity_hz"][key][region] == pytest.approx(
                derivative(m, k0, which, layer), rel=2e-2)
    step = 1e-7
    df_dt = (layered_frequency(m, EPS, MU, k0, T + step)
             - layered_frequency(m, EPS, MU, k0, T - step)) / (2 * step)
    spread = mode["tolerance"]["delta_f_hz"]["block_size[2]"]
    assert spread == pytest.approx(abs(df_dt) * 10e-6, rel=1e-2)
