"""Material sensitivities by first-order perturbation against finite differences of full
solves (the layered box of tests/test_permeability.py checks them against a closed form,
in both field forms and through the case file)."""

from __future__ import annotations

import pytest

from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.post.sensitivity import material_sensitivities
from femcav.solver import solve_model

DR = {"shield_radius": 0.012, "shield_height": 0.016, "puck_radius": 0.005,
      "puck_height": 0.004, "support_radius": 0.0025, "support_height": 0.004}


@pytest.fixture(scope="module")
def dr_mesh():
    return build_part("dr_fixture", **DR, mesh_size=0.0025, curved=True)


def solve(mesh, eps=30.0, mu=1.0):
    materials = {"air": Material(), "puck": Material(eps_r=eps, mu_r=mu),
                 "support": Material(eps_r=2.1)}
    return solve_model(make_model(mesh, materials, {}), modes=3, order=2)


def test_puck_sensitivities_match_central_differences(dr_mesh):
    # Two more full solves on the same mesh per quantity; central differences are good to
    # O(δ²) (measured agreement 2e-5 to 7e-5), the bar is 1 %.
    base = solve(dr_mesh)
    up, down = solve(dr_mesh, eps=30.3), solve(dr_mesh, eps=29.7)
    mu_up, mu_down = solve(dr_mesh, mu=1.01), solve(dr_mesh, mu=0.99)
    for k, mode in enumerate(base.modes):
        s = material_sensitivities(base.space, mode.dofs, mode.frequency_hz)
        d_eps = (up.modes[k].frequency_hz - down.modes[k].frequency_hz) / 0.6
        d_mu = (mu_up.modes[k].frequency_hz - mu_down.modes[k].frequency_hz) / 0.02
        assert s.eps_r["puck"] == pytest.approx(d_eps, rel=1e-3)
        assert s.mu_r["puck"] == pytest.approx(d_mu, rel=1e-3)
        assert s.eps_r["puck"] < 0 and s.eps_r["air"] < 0


AXI_CASE = """
title = "DR fixture on its section, sensitivities"
[geometry]
builder = "dr_fixture"
shield_radius = "12 mm"
shield_height = "16 mm"
puck_radius = "5 mm"
puck_height = "4 mm"
puck_hole_radius = "0 mm"
support_radius = "2.5 mm"
support_height = "4 mm"
[regions.puck]
eps_r = {eps}
[regions.support]
eps_r = 2.1
[mesh]
size = "1.5 mm"
[solve]
modes = 2
order = 2
form = "{form}"
azimuthal_orders = [{m}]
sensitivities = true
"""


@pytest.mark.parametrize("form, m", [("E", 0), ("H", 1)])
def test_axisymmetric_sensitivities_match_differences_and_the_scaling_law(tmp_path, form, m):
    # Two checks from outside the perturbation formula: (1) f(λ ε_r everywhere) = f / √λ
    # (Maxwell's equations scale so; common practice), so Euler's theorem for homogeneous
    # functions gives Σ_i ε_i ∂f/∂ε_i = -f/2, and likewise for μ_r; (2) central differences
    # of full section solves in the puck's ε_r (O(δ²) accurate).
    from femcav.case import load_case
    from femcav.runner import solve_case

    def modes(eps):
        path = tmp_path / f"dr_{eps}.toml"
        path.write_text(AXI_CASE.format(eps=eps, form=form, m=m))
        case = load_case(path)
        return solve_case(case, case.solve).modes

    base, up, down = modes(30.0), modes(30.3), modes(29.7)
    eps = {"air": 1.0, "puck": 30.0, "support": 2.1}
    for k, mode in enumerate(base):
        s = mode.sensitivity
        assert sum(eps[r] * s.eps_r[r] for r in eps) == pytest.approx(
            -mode.frequency_hz / 2, rel=1e-9)
        assert sum(s.mu_r.values()) == pytest.approx(-mode.frequency_hz / 2, rel=1e-9)
        d_eps = (up[k].frequency_hz - down[k].frequency_hz) / 0.6
        assert s.eps_r["puck"] == pytest.approx(d_eps, rel=1e-3)
