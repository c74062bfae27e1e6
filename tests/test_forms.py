"""The E form and the H form are two discretisations of one problem: they must agree to
discretisation error, and each must treat PEC and PMC walls correctly."""

import numpy as np
import pytest

from femcav.analytic.box import box_modes
from femcav.geometry import build_part, read_mesh
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import solve_model
from femcav.walls import Wall
from conftest import box_with_blocks

A, B, D = 0.02286, 0.01016, 0.030


def test_e_and_h_forms_agree_for_a_dielectric_block(tmp_path):
    gaps = []
    for size in (0.002, 0.0014):
        mesh = read_mesh(box_with_blocks(tmp_path / f"block{size}.msh", (A, B, D),
                                         {"block": (0.008, 0.0, 0.010, 0.007, 0.006, 0.010)},
                                         mesh_size=size))
        model = make_model(mesh, {"air": Material(), "block": Material(eps_r=6.0)}, {})
        f_e = np.array([m.frequency_hz for m in solve_model(model, modes=5, form="E").modes])
        f_h = np.array([m.frequency_hz for m in solve_model(model, modes=5, form="H").modes])
        gaps.append(np.abs(f_e - f_h) / f_e)
    coarse, fine = gaps
    # The two forms approach one limit: the gap closes under refinement (for h^p convergence
    # with p near 2 and a refinement of sqrt(2) it would halve; the block's corners slow it).
    assert np.all(fine < 0.75 * coarse), (coarse, fine)
    assert np.all(fine < 0.02)


@pytest.mark.parametrize("form", ["E", "H"])
def test_pmc_symmetry_plane_keeps_the_odd_family(form):
    # Halving the box at x = a/2 with a PMC wall keeps the modes whose x index m is odd:
    # their tangential H vanishes on the mid-plane (closed form: Pozar §6.3, as in test_box).
    mesh = build_part("box", width=A / 2, height=B, length=D, mesh_size=0.0015)
    model = make_model(mesh, {"inside": Material()}, {"x_max": Wall("pmc")})
    result = solve_model(model, modes=6, form=form)
    reference = [f for f, label in box_modes(A, B, D, 3e10) if int(label[2]) % 2 == 1][:6]
    computed = [m.frequency_hz for m in result.modes]
    np.testing.assert_allclose(computed, reference, rtol=5e-3)
    assert all(m.checks.passed for m in result.modes)
