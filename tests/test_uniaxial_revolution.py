"""A body of revolution filled with a crystal whose axis is the body's axis (issue 27): the
section solver with ε_rr = ε_φφ = ε⊥ and ε_zz = ε∥, against a closed form and the 3D solver.

Reference: a PEC pillbox filled with ε = diag(ε⊥, ε⊥, ε∥), TE to z at k0² ε⊥ = k_t² + k_z²
and TM to z at k0² = k_t²/ε∥ + k_z²/ε⊥ (derived in femcav/analytic/uniaxial_cylinder.py from
Maxwell's curl equations; W. C. Chew, Waves and Fields in Inhomogeneous Media, 1990, ch. 1,
from memory; Bessel zeros from scipy.special). TM_0n0 has E along z only, TE_0np E along φ
only, so their dielectric Q is 1/tan δ∥ and 1/tan δ⊥ exactly.
"""

from __future__ import annotations

import numpy as np
import pytest

from femcav.analytic.uniaxial_cylinder import uniaxial_pillbox_modes
from femcav.case import load_case
from femcav.errors import InputError
from femcav.runner import solve_case

RADIUS, LENGTH = 0.010, 0.015
PERPENDICULAR, PARALLEL = 9.27, 11.34      # sapphire near 4 K (Krupka et al. 1999, memory)
T_PERPENDICULAR, T_PARALLEL = 2e-4, 5e-4

CASE = """
title = "uniaxial pillbox"
[geometry]
builder = "pillbox"
radius = {radius}
length = {length}
[regions.inside]
eps_r = {{perpendicular = {perpendicular}, parallel = {parallel}, axis = {axis}}}
tan_delta = {{perpendicular = {t_perpendicular}, parallel = {t_parallel}}}
[mesh]
size = {size}
{curved}
[solve]
modes = {modes}
form = "{form}"
order = {order}
{orders}
"""


def closed_form(m: int, count: int) -> list[tuple[float, str]]:
    """(frequency in Hz, name) of the lowest ``count`` modes of order m."""
    return uniaxial_pillbox_modes(RADIUS, LENGTH, m, count, PERPENDICULAR, PARALLEL)


def _solve(tmp_path, *, axis="[0, 0, 1]", size=0.002, form="E", order=3, modes=4,
           orders="azimuthal_orders = [0, 1]", curved=""):
    path = tmp_path / "pillbox.toml"
    path.write_text(CASE.format(radius=RADIUS, length=LENGTH, perpendicular=PERPENDICULAR,
                                parallel=PARALLEL, t_perpendicular=T_PERPENDICULAR,
                                t_parallel=T_PARALLEL, axis=axis, size=size, form=form,
                                order=order, modes=modes, orders=orders, curved=curved))
    case = load_case(path)
    return solve_case(case, case.solve)


@pytest.mark.parametrize("form", ["E", "H"])
def test_uniaxial_pillbox_on_its_section_against_the_closed_form(tmp_path, form):
    result = _solve(tmp_path, form=form, modes=8)
    for m in (0, 1):
        found = sorted(mode.frequency_hz for mode in result.modes if mode.m == m)
        exact = [f for f, _ in closed_form(m, len(found))]
        assert len(found) >= 3
        # order 3 on a 2 mm section: measured within 2.8e-6 (E form) and 2.1e-6 (H form)
        assert np.allclose(found, exact, rtol=1e-5), (m, found, exact)
    for mode in result.modes:
        assert mode.checks.passed
        _, name = min(closed_form(mode.m, 12), key=lambda fn: abs(fn[0] - mode.frequency_hz))
        losses = mode.losses
        if name.startswith("TM0") and name.endswith("0"):   # E along z only
            assert losses.q_dielectric == pytest.approx(1 / T_PARALLEL, rel=1e-6)
            assert losses.filling_factor_parallel["inside"] == pytest.approx(1, abs=1e-6)
        if name.startswith("TE0"):                           # E along φ only
            assert losses.q_dielectric == pytest.approx(1 / T_PERPENDICULAR, rel=1e-6)


def test_the_3d_solver_agrees_with_the_section(tmp_path):
    result = _solve(tmp_path, size=0.003, order=2, modes=5, orders="", curved="curved = true")
    exact = [f for m in (0, 1, 2) for f, _ in closed_form(m, 3) for _ in range(1 if m == 0
                                                                               else 2)]
    found = [mode.frequency_hz for mode in result.modes]
    # each 3D mode near a closed-form one (m >= 1 twice): order 2, curved 3 mm tetrahedra,
    # measured within 3.9e-4
    for f in found:
        assert min(abs(f / e - 1) for e in exact) < 1e-3


def test_a_crystal_axis_across_the_body_axis_is_refused_on_a_section(tmp_path):
    with pytest.raises(InputError, match="axis along z") as caught:
        _solve(tmp_path, axis='"x"')
    assert caught.value.field == "regions.inside.eps_r"


DRIFT = """
[regions.inside]
eps_r = {{perpendicular = {perpendicular}, parallel = {parallel}, axis = "z"}}
tce = {{perpendicular = "{tce_perpendicular} ppm/K", parallel = "{tce_parallel} ppm/K"}}
[walls.side]
kind = "pec"
expansion = "{alpha} ppm/K"
[mesh]
size = {size}
[solve]
modes = 3
azimuthal_orders = [0]
"""


def _drift_case(tmp_path, name, *, perpendicular, parallel, alpha, radius, length, size):
    path = tmp_path / name
    path.write_text(f'[geometry]\nbuilder = "pillbox"\nradius = {radius}\nlength = {length}\n'
                    + DRIFT.format(perpendicular=perpendicular, parallel=parallel,
                                   tce_perpendicular=120, tce_parallel=-40, alpha=alpha,
                                   size=size))
    case = load_case(path)
    return solve_case(case, case.solve).modes


def test_a_tce_per_direction_against_solves_at_two_temperatures(tmp_path):
    # τε⊥ = +120 ppm/K, τε∥ = -40 ppm/K, α = 6 ppm/K (made-up values of opposite sign, so
    # that a mode's drift depends on how its energy splits between the directions)
    alpha, dt = 6e-6, 10.0
    base = dict(perpendicular=PERPENDICULAR, parallel=PARALLEL, alpha=alpha * 1e6,
                radius=RADIUS, length=LENGTH, size=0.002)
    modes = _drift_case(tmp_path, "base.toml", **base)
    moved = []
    for sign in (1, -1):
        grow = 1 + sign * dt * alpha
        moved.append(_drift_case(
            tmp_path, f"t{sign}.toml", perpendicular=PERPENDICULAR * (1 + sign * dt * 120e-6),
            parallel=PARALLEL * (1 - sign * dt * 40e-6), alpha=0, radius=RADIUS * grow,
            length=LENGTH * grow, size=0.002 * grow))
    for k, mode in enumerate(modes):
        reference = (moved[0][k].frequency_hz - moved[1][k].frequency_hz) / (2 * dt)
        # measured within 1.5e-6 relative
        assert mode.temperature.df_dt_hz_per_k == pytest.approx(reference, rel=1e-4)
    # TM010 has E along z only, TE011 along φ only: τf = -τε∥/2 - α and -τε⊥/2 - α exactly
    # (first order); TM011 between them
    assert modes[0].temperature.tau_f_ppm_per_k == pytest.approx(40 / 2 - 6, rel=1e-6)
    assert modes[2].temperature.tau_f_ppm_per_k == pytest.approx(-120 / 2 - 6, rel=1e-6)
    assert -66 < modes[1].temperature.tau_f_ppm_per_k < 14


@pytest.mark.parametrize("form", ["E", "H"])
def test_the_complex_check_takes_a_loss_tangent_per_direction(tmp_path, form):
    # the losses inside the operator (ε⊥ (1 - j tan δ⊥) across, ε∥ (1 - j tan δ∥) along z):
    # the complex eigenvalue's Q agrees with the perturbation Q_d to O(tan δ)
    path = tmp_path / "pillbox.toml"
    path.write_text(CASE.format(radius=RADIUS, length=LENGTH, perpendicular=PERPENDICULAR,
                                parallel=PARALLEL, t_perpendicular=T_PERPENDICULAR,
                                t_parallel=T_PARALLEL, axis="[0, 0, 1]", size=0.003,
                                form=form, order=3, modes=4, curved="",
                                orders="azimuthal_orders = [0, 1]\ncomplex_check = true"))
    case = load_case(path)
    modes = solve_case(case, case.solve).modes
    for mode in modes:
        # measured within 7.6e-8 in both forms, O(tan² δ)
        assert mode.q_dielectric_complex == pytest.approx(mode.losses.q_dielectric,
                                                          rel=1e-6)
    tm010 = min(modes, key=lambda m: m.frequency_hz)
    assert tm010.q_dielectric_complex * T_PARALLEL == pytest.approx(1, rel=T_PARALLEL)
