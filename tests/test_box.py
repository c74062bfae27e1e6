"""Empty rectangular cavity against the closed form (Pozar, Microwave Engineering, 4th ed.,
§6.3, section number from memory; see femcav/analytic/box.py)."""

import math

import numpy as np
import pytest

from femcav.analytic.box import box_modes, lowest_box_frequencies
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import solve_model

A, B, D = 0.02286, 0.01016, 0.030   # a WR-90-sized cross-section, 30 mm long


@pytest.fixture(scope="module")
def box_result():
    mesh = build_part("box", width=A, height=B, length=D, mesh_size=0.001)
    return solve_model(make_model(mesh, {"inside": Material()}, {}), modes=10)


def test_lowest_ten_modes_match_closed_form(box_result):
    computed = np.array([m.frequency_hz for m in box_result.modes])
    reference = np.array(lowest_box_frequencies(A, B, D, 10))
    assert len(computed) == 10
    assert np.max(np.abs(computed / reference - 1)) < 2e-3


def test_no_static_or_spurious_modes(box_result):
    first = lowest_box_frequencies(A, B, D, 1)[0]
    for mode in box_result.modes:
        assert mode.frequency_hz > 0.99 * first
        assert mode.checks.passed
        assert mode.checks.divergence < 1e-10
        assert mode.checks.residual < 1e-8


def test_count_below_frequency_matches_closed_form(box_result):
    # Between the 10th and 11th analytic modes lies a gap; counts at gap midpoints must agree.
    modes = box_modes(A, B, D, f_max=1.2 * box_result.modes[-1].frequency_hz)
    freqs = [f for f, _ in modes]
    computed = [m.frequency_hz for m in box_result.modes]
    for lower, upper in zip(freqs[:10], freqs[1:11]):
        if upper / lower - 1 < 1e-2:   # degenerate or nearly: no clean cut between them
            continue
        cut = math.sqrt(lower * upper)
        assert sum(f < cut for f in computed) == sum(f < cut for f in freqs)


def test_near_target_returns_modes_around_it(box_result):
    mesh = build_part("box", width=A, height=B, length=D, mesh_size=0.002)
    reference = lowest_box_frequencies(A, B, D, 10)
    target = 0.5 * (reference[5] + reference[6])
    near = solve_model(make_model(mesh, {"inside": Material()}, {}), modes=4, near_hz=target)
    got = sorted(m.frequency_hz for m in near.modes)
    expected = sorted(reference, key=lambda f: abs(f - target))[:4]
    np.testing.assert_allclose(got, sorted(expected), rtol=1e-2)
    assert all(m.checks.passed for m in near.modes)


def test_mesh_without_interior_nodes_still_solves():
    # A 7.3 mm mesh of a 10.16 mm high box has no interior vertex: the gradient space is
    # empty, and there is nothing to deflate. The modes must still come out and pass.
    mesh = build_part("box", width=A, height=B, length=D, mesh_size=0.0073)
    result = solve_model(make_model(mesh, {"inside": Material()}, {}), modes=3)
    reference = lowest_box_frequencies(A, B, D, 1)[0]
    assert all(m.checks.passed for m in result.modes) and len(result.modes) == 3
    # Two elements across the height: coarse, but TE101 is still within 10 %.
    assert result.modes[0].frequency_hz == pytest.approx(reference, rel=0.1)
