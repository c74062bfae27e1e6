"""The axisymmetric solver in the H form, ∇×(ε_r⁻¹∇×H) = k0² μ_r H, against closed forms and
against its own E form.

References: pillbox resonances from the Bessel zeros (scipy.special) and the TM010 and TE011
wall Q (D. M. Pozar, Microwave Engineering, 4th ed., §6.4; common practice), as in
tests/test_axisymmetric.py; a uniformly filled cavity resonates at f0 / sqrt(ε_r μ_r) with
Q_d = 1 / tan δ (Pozar §6.3, common practice); image theory for a PMC lid (common practice).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import c
from scipy.special import jn_zeros, jnp_zeros

from femcav.axisymmetric.model import make_axisymmetric_model
from femcav.axisymmetric.revolve import revolved_grid
from femcav.axisymmetric.solve import solve_axisymmetric
from femcav.geometry import BUILDERS
from femcav.geometry.parts import Sizing
from femcav.geometry.section import mesh_section
from femcav.materials import Material
from femcav.walls import Wall

from test_axisymmetric import (A, COPPER, D, PILLBOX_MODES, find, frequency, pillbox_section,
                               te011_wall_q, tm010_wall_q, wedge_volumes)

METAL = {w: Wall("metal", conductivity=COPPER) for w in ("side", "bottom", "top")}


@pytest.fixture(scope="module")
def both_forms():
    model = make_axisymmetric_model(pillbox_section(0.001), {"inside": Material()}, METAL)
    return {form: solve_axisymmetric(model, orders=(0, 1, 2), modes=8, order=3, form=form)
            for form in "EH"}


@pytest.mark.parametrize("name, m, field_class, zero, l", PILLBOX_MODES)
def test_h_form_pillbox_against_bessel_zeros_and_the_e_form(both_forms, name, m, field_class,
                                                           zero, l):
    expected = frequency(zero, l)
    h = find(both_forms["H"], m, field_class, expected)
    e = find(both_forms["E"], m, field_class, expected)
    # order 3 on a 1 mm section: both forms within 1e-7 of the Bessel values (h^6)
    assert h.frequency_hz == pytest.approx(expected, rel=1e-7), name
    assert e.frequency_hz == pytest.approx(expected, rel=1e-7), name
    assert h.checks.passed


def test_h_form_wall_q_of_tm010_and_te011(both_forms):
    p01, p1 = jn_zeros(0, 1)[0], jnp_zeros(0, 1)[0]
    tm = find(both_forms["H"], 0, "TM-like", frequency(p01, 0))
    assert tm.losses.q_wall == pytest.approx(tm010_wall_q(tm.frequency_hz), rel=1e-6)
    te = find(both_forms["H"], 0, "TE-like", frequency(p1, 1))
    assert te.losses.q_wall == pytest.approx(te011_wall_q(te.frequency_hz), rel=1e-6)

    # the H form carries H on the wall itself: its wall Q is closer than the E form's
    def tm010_error(mode):
        return abs(mode.losses.q_wall / tm010_wall_q(mode.frequency_hz) - 1)
    assert tm010_error(tm) < tm010_error(find(both_forms["E"], 0, "TM-like", frequency(p01, 0)))


@pytest.mark.parametrize("form", ["E", "H"])
def test_filled_magnetic_lossy_pillbox(form):
    # ε_r = 4 (tan δ = 1e-3) and μ_r = 2 fill the whole cavity: every frequency is the empty
    # one over sqrt(ε_r μ_r), and Q_d = 1/tan δ by perturbation and by the complex solve
    model = make_axisymmetric_model(pillbox_section(0.002),
                                    {"inside": Material(eps_r=4.0, mu_r=2.0, tan_delta=1e-3)},
                                    {})
    result = solve_axisymmetric(model, orders=(0, 1), modes=3, order=3, form=form,
                                complex_check=True)
    tm010 = frequency(jn_zeros(0, 1)[0], 0) / math.sqrt(8.0)
    assert result.modes[0].frequency_hz == pytest.approx(tm010, rel=1e-6)
    for mode in result.modes:
        assert mode.losses.q_dielectric == pytest.approx(1000, rel=1e-9)
        assert mode.q_dielectric_complex == pytest.approx(1000, rel=1e-6)


@pytest.mark.parametrize("m", [0, 1])
def test_h_form_pmc_lid_gives_the_odd_modes_of_a_pillbox_twice_as_long(m):
    # in the H form the PMC lid is the essential wall and the metal ones are natural
    model = make_axisymmetric_model(pillbox_section(0.001), {"inside": Material()},
                                    {"top": Wall("pmc")})
    result = solve_axisymmetric(model, orders=(m,), modes=4, order=3, form="H")
    expected = sorted(c / (2 * math.pi) * math.hypot(x / A, (2 * q + 1) * math.pi / (2 * D))
                      for q in range(4) for x in [*jn_zeros(m, 3), *jnp_zeros(m, 3)])[:4]
    np.testing.assert_allclose([mode.frequency_hz for mode in result.modes], expected,
                               rtol=1e-7)


def test_dr_fixture_e_and_h_forms_agree():
    # two discretisations of one (made-up) part with a ε_r = 30 puck: they converge from
    # either side; at this graded order-3 mesh they agree to a few parts in 10^7 (the
    # puck's corners are field singularities, which bound the rate)
    dims = {"shield_radius": 0.012, "shield_height": 0.016, "puck_radius": 0.005,
            "puck_height": 0.004, "support_radius": 0.0025, "support_height": 0.004,
            "puck_hole_radius": 0.0, "puck_offset": 0.0}
    section = mesh_section(BUILDERS["dr_fixture"].layout(**dims), Sizing(size=0.0008))
    model = make_axisymmetric_model(section, {"air": Material(), "puck": Material(eps_r=30.0),
                                              "support": Material(eps_r=2.1)}, {})
    found = {form: [m.frequency_hz for m in solve_axisymmetric(
        model, orders=(0, 1), modes=4, order=3, form=form).modes] for form in "EH"}
    np.testing.assert_allclose(found["H"], found["E"], rtol=1e-6)


def test_h_form_revolved_fields_hold_one_joule(both_forms):
    result = both_forms["H"]
    points, wedges, data = revolved_grid(result, segments=36)
    volumes = wedge_volumes(points, wedges)
    for mode in result.modes[:5]:
        tag = f"m{mode.index:02d}"
        # time-averaged energies, half of the 1 J stored each at resonance (Pozar §6.1)
        assert float(np.sum(data[f"{tag}_we"] * volumes)) == pytest.approx(0.5, rel=2e-2)
        assert float(np.sum(data[f"{tag}_wm"] * volumes)) == pytest.approx(0.5, rel=2e-2)


def test_form_h_on_the_command_line(tmp_path, capsys):
    import json

    from femcav.cli import main
    from test_axisymmetric import CASE

    case = tmp_path / "cell.toml"
    case.write_text(CASE)
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out), "--form", "H", "--no-report",
                 "-q"]) == 0
    document = json.loads((out / "modes.json").read_text())
    assert document["form"] == "H"
    assert document["modes"][0]["frequency_hz"] == pytest.approx(
        frequency(jn_zeros(0, 1)[0], 0), rel=1e-7)
