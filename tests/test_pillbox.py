"""Circular cylinder cavity against Bessel-zero formulas (Pozar, Microwave Engineering,
4th ed., §6.4, section number from memory), zeros from scipy.special."""

import math

import numpy as np
from scipy.constants import c
from scipy.special import jn_zeros

from femcav.analytic.cylinder import lowest_pillbox_frequencies
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import solve_model

RADIUS, LENGTH = 0.010, 0.015


def solve_pillbox(mesh_size, modes):
    mesh = build_part("pillbox", radius=RADIUS, length=LENGTH, mesh_size=mesh_size)
    return solve_model(make_model(mesh, {"inside": Material()}, {}), modes=modes)


def test_lowest_eight_modes_match_bessel_zeros():
    result = solve_pillbox(0.001, 8)
    computed = np.array([m.frequency_hz for m in result.modes])
    reference = np.array(lowest_pillbox_frequencies(RADIUS, LENGTH, 8))
    assert np.max(np.abs(computed / reference - 1)) < 5e-3
    assert all(m.checks.passed for m in result.modes)


def test_tm010_converges_like_h_squared():
    # TM010: f = c p01 / (2π r), p01 the first zero of J0.
    exact = c * jn_zeros(0, 1)[0] / (2 * math.pi * RADIUS)
    dofs, errors = [], []
    for size in (0.002, 0.0014, 0.001):
        result = solve_pillbox(size, 1)
        dofs.append(result.dofs)
        errors.append(abs(result.modes[0].frequency_hz / exact - 1))
    # h ~ DOFs^(-1/3) for a quasi-uniform mesh; error ~ h^rate.
    rate = -3 * np.polyfit(np.log(dofs), np.log(errors), 1)[0]
    assert 1.7 <= rate <= 2.3, f"rate {rate:.2f}, errors {errors}"
    assert errors[-1] < errors[0]
