"""Dimension derivatives on morphed meshes against closed forms, and the tolerance report."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.constants import c
from scipy.special import jn_zeros, jnp_zeros

from femcav.case import case_from_data
from femcav.cli import main
from femcav.runner import solve_case
from femcav.morph import dimension_derivatives, morph

A, L = 0.010, 0.015


def pillbox_case(**solve):
    data = {"title": "Made-up pillbox", "geometry": {"builder": "pillbox", "radius": A,
                                                    "length": L},
            "mesh": {"size": 0.0025, "curved": True}, "solve": {"modes": 3, "order": 2, **solve}}
    return case_from_data(data, Path("pillbox.toml"))


def test_pillbox_derivatives_against_the_bessel_formulas():
    # f = c/(2π) sqrt((x/a)² + (lπ/L)²) (Pozar §6.4, from memory): df/da = -c (x/a)² / (2π a k)
    # and df/dL = -c (lπ/L)² / (2π L k) with k = 2π f / c. TM010 (x = p01, l = 0), TE111
    # (x = p'11, l = 1, a pair). Measured at this 2.5 mm curved mesh: within 1.8e-4 (TE111
    # radius; 2 mm: 8.7e-5, in 2.5 times the time).
    case = pillbox_case()
    result = solve_case(case, case.solve)
    d = dimension_derivatives(case, result, ["radius", "length"])
    for index, x, l in ((0, jn_zeros(0, 1)[0], 0), (1, jnp_zeros(1, 1)[0], 1),
                        (2, jnp_zeros(1, 1)[0], 1)):
        k = math.hypot(x / A, l * math.pi / L)
        exact_a = -c * (x / A) ** 2 / (2 * math.pi * A * k)
        exact_l = -c * (l * math.pi / L) ** 2 / (2 * math.pi * L * k)
        assert d["radius"][index] == pytest.approx(exact_a, rel=5e-4)
        assert d["length"][index] == pytest.approx(exact_l, rel=5e-4, abs=1e-4 * abs(exact_a))


def test_morphed_mesh_is_the_new_part():
    # The morphed pillbox mesh has the new radius on its side wall and the new volume.
    from femcav.geometry import build_part, builder_layout

    mesh = build_part("pillbox", radius=A, length=L, mesh_size=0.003)
    new = morph(mesh, builder_layout("pillbox", {"radius": A, "length": L}),
                builder_layout("pillbox", {"radius": 1.01 * A, "length": L}))
    r_old = np.hypot(*mesh.points[:, :2].T)
    r_new = np.hypot(*new.points[:, :2].T)
    side = np.abs(r_old - A) < 1e-9
    np.testing.assert_allclose(r_new[side], 1.01 * A, rtol=1e-12)
    assert new.tet_volumes().sum() == pytest.approx(mesh.tet_volumes().sum() * 1.01**2,
                                                    rel=1e-12)


def test_dr_puck_radius_derivative_agrees_with_the_axisymmetric_solver():
    # Two independent routes: 3D morphed-mesh difference, and differences of ppb-accurate
    # axisymmetric solves on re-meshed sections (their noise is far below the step's effect).
    from femcav.axisymmetric.model import make_axisymmetric_model
    from femcav.axisymmetric.solve import solve_axisymmetric
    from femcav.geometry import BUILDERS
    from femcav.geometry.parts import Sizing
    from femcav.geometry.section import mesh_section
    from femcav.materials import Material

    dims = {"shield_radius": 0.012, "shield_height": 0.016, "puck_radius": 0.005,
            "puck_height": 0.004, "support_radius": 0.0025, "support_height": 0.004}
    data = {"title": "Made-up DR fixture", "geometry": {"builder": "dr_fixture", **dims},
            "regions": {"puck": {"eps_r": 30.0}, "support": {"eps_r": 2.1}},
            "mesh": {"size": 0.0022, "curved": True}, "solve": {"modes": 1, "order": 2}}
    case = case_from_data(data, Path("dr.toml"))
    d3 = dimension_derivatives(case, solve_case(case, case.solve), ["puck_radius"])
    materials = {"air": Material(), "puck": Material(eps_r=30.0), "support": Material(eps_r=2.1)}

    def axisymmetric(radius):
        layout = BUILDERS["dr_fixture"].layout(**{**dims, "puck_radius": radius,
                                                  "puck_hole_radius": 0.0, "puck_offset": 0.0})
        model = make_axisymmetric_model(mesh_section(layout, Sizing(size=0.0008)), materials, {})
        return solve_axisymmetric(model, orders=(0,), modes=1, order=3).modes[0].frequency_hz
    step = 2e-5
    d2 = (axisymmetric(0.005 + step) - axisymmetric(0.005 - step)) / (2 * step)
    assert d3["puck_radius"][0] == pytest.approx(d2, rel=0.02)


def test_tolerance_table_reports_the_frequency_spread(tmp_path):
    case = tmp_path / "t.toml"
    case.write_text('title = "Made-up wavemeter, tolerances"\n[geometry]\nbuilder = "pillbox"\n'
                    'radius = "10 mm"\nlength = "15 mm"\n[mesh]\nsize = "3 mm"\ncurved = true\n'
                    '[solve]\nmodes = 1\norder = 2\n[tolerances]\nradius = "20 um"\nlength = "50 um"\n')
    assert main(["solve", str(case), "--out", str(tmp_path / "out"), "-q", "--no-report"]) == 0
    mode = json.loads((tmp_path / "out" / "modes.json").read_text())["modes"][0]
    t = mode["tolerance"]
    # TM010 depends on the radius only: Δf = f · 20 µm / 10 mm
    assert t["delta_f_hz"]["radius"] == pytest.approx(mode["frequency_hz"] * 2e-3, rel=1e-2)
    assert t["delta_f_hz"]["length"] < 1e-2 * t["delta_f_hz"]["radius"]
    assert t["worst_case_hz"] >= t["rss_hz"] >= t["delta_f_hz"]["radius"]
