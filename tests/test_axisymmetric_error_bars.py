"""Error bars and accuracy targets on bodies of revolution: the mesh-sequence estimate that the
3D solver has, on the meridional section.

References: the pillbox's closed forms, TM_nml at sqrt((p_nm / a)² + (lπ/d)²) and TE_nml with
p'_nm, zeros of J_n and J_n' from scipy.special (D. M. Pozar, Microwave Engineering, 4th ed.,
§6.3; section number from memory), written out in femcav.analytic.cylinder; scikit-fem's own
interpolation for the field reader.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from femcav.analytic.cylinder import pillbox_modes
from femcav.axisymmetric.model import make_axisymmetric_model
from femcav.axisymmetric.solve import solve_axisymmetric
from femcav.cli import main
from femcav.geometry import BUILDERS
from femcav.geometry.parts import Sizing
from femcav.geometry.section import mesh_section
from femcav.materials import Material
from femcav.post.field_overlap import result_overlaps
from femcav.post.singularity import SINGULAR_RATE, bar_rate

A, D = 0.010, 0.015

CASE = """
title = "pillbox, axisymmetric, with error bars"
[geometry]
builder = "pillbox"
radius = "10 mm"
length = "15 mm"
[walls]
side = {{ kind = "metal", metal = "copper" }}
[mesh]
size = "{size}"
[solve]
modes = 5
order = 2
azimuthal_orders = [0, 1, 2]
{extra}
"""


def closed_form(m: int, frequency_hz: float) -> float:
    """The pillbox resonance of azimuthal order m nearest ``frequency_hz``."""
    listed = [f for f, name in pillbox_modes(A, D, 30e9) if int(name[2]) == m]
    return min(listed, key=lambda f: abs(f - frequency_hz))


def solve(tmp_path, size, extra):
    case = tmp_path / "pillbox.toml"
    case.write_text(CASE.format(size=size, extra=extra))
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out), "--no-report", "--quiet"]) == 0
    return json.loads((out / "modes.json").read_text())


@pytest.fixture(scope="module", params=[2, 3])
def section_result(request):
    # order 3 takes the third-order Nédélec triangle through point_location's pointwise map
    section = mesh_section(BUILDERS["pillbox"].layout(radius=A, length=D),
                           Sizing(size=0.003, curved=True))
    model = make_axisymmetric_model(section, {"inside": Material()}, {})
    return solve_axisymmetric(model, orders=(0, 1), modes=4, order=request.param)


def test_field_reader_agrees_with_scikit_fem_on_curved_sections(section_result):
    # On its own mesh the reader must give what scikit-fem's interpolation gives at the
    # quadrature points (a general-purpose library as reference); curved triangles exercise
    # the Newton inversion of the element map.
    for _, space, positions in section_result.mode_spaces():
        vectors = np.column_stack([section_result.modes[i].dofs for i in positions])
        points, _ = space.samples()
        got = (space.field_reader(points).matrix @ vectors).reshape(3, points.shape[1], -1)
        want = space.sampled_fields(vectors)
        np.testing.assert_allclose(got, want, atol=1e-9 * np.abs(want).max())


def test_overlap_of_a_section_result_with_itself_is_the_identity(section_result):
    # The solver's modes are M-orthonormal within an order, and orders are orthogonal
    # (common practice: cos mφ fields of different m are orthogonal over φ).
    o = result_overlaps(section_result, section_result)
    np.testing.assert_allclose(o.matrix, np.eye(len(section_result.modes)), atol=1e-8)


def test_error_bars_contain_the_closed_form_pillbox_values(tmp_path):
    document = solve(tmp_path, "2.5 mm", "error_estimate = true")
    checked = 0
    for mode in document["modes"]:
        exact = closed_form(mode["azimuthal_order"], mode["frequency_hz"])
        bar = mode["error_estimate_hz"]
        assert abs(mode["frequency_hz"] - exact) <= bar, (mode["index"], exact)
        # a bar, not a shrug: on these coarse sections (order 2, 2.5 mm) the errors are 3e-6
        # to 1.5e-4 and the bars 1.1 to 12 times them (measured), the widest 1.7e-3
        assert bar < 3e-3 * exact
        checked += 1
    assert checked == 5


def test_an_accuracy_target_refines_the_section_until_the_bars_meet_it(tmp_path):
    document = solve(tmp_path, "1.6 mm", 'accuracy = "10 ppm"')
    assert document["accuracy"]["reached"] is True
    assert document["accuracy"]["largest_relative_bar"] <= 1e-5
    for mode in document["modes"]:
        exact = closed_form(mode["azimuthal_order"], mode["frequency_hz"])
        assert abs(mode["frequency_hz"] - exact) <= mode["error_estimate_hz"], mode["index"]
        assert abs(mode["frequency_hz"] - exact) <= 1e-5 * exact


def test_a_reentrant_section_corner_gets_the_singular_rate():
    # a re-entrant metal edge of interior angle 3π/2 gives the eigenvalue error h^(4/3)
    # (D. Boffi, Acta Numerica 19 (2010), from memory); a convex pillbox keeps 2k
    pillbox = mesh_section(BUILDERS["pillbox"].layout(radius=A, length=D), Sizing(size=0.004))
    assert bar_rate(make_axisymmetric_model(pillbox, {"inside": Material()}, {}), 2) == 4.0
    # a post on the axis, reaching into the cavity: its end rim is a re-entrant edge
    layout = BUILDERS["tuned_pillbox"].layout(radius=A, length=D, post_radius=0.002,
                                              post_depth=0.005, post_offset=0.0)
    section = mesh_section(layout, Sizing(size=0.004))
    materials = {name: Material() for name in section.region_names}
    assert bar_rate(make_axisymmetric_model(section, materials, {}), 2) == SINGULAR_RATE


def test_a_size_that_repeats_the_mesh_is_replaced_by_a_finer_one():
    # A mesher that answers two sizes with one mesh adds nothing to the sequence: the
    # estimate drops the repeat and solves one finer mesh instead, so three distinct meshes
    # remain, and the bars still hold the Bessel-zero values (Pozar §6.3).
    from femcav.error_bars import estimate_errors

    layout = BUILDERS["pillbox"].layout(radius=A, length=D)

    def build(size):               # sizes above 5 mm all give the 5 mm mesh
        section = mesh_section(layout, Sizing(size=min(size, 0.005)))
        return make_axisymmetric_model(section, {"inside": Material()}, {})

    estimated = estimate_errors(build, [0.0075, 0.006, 0.0045], modes=3, size_measure="dofs",
                                solve=solve_axisymmetric, orders=(0, 1), order=2)
    assert estimated.sizes == pytest.approx((0.006, 0.0045, 0.0045 * 0.0045 / 0.006))
    assert len(set(estimated.dofs)) == 3
    for mode, bar in zip(estimated.finest.modes, estimated.estimates):
        assert abs(mode.frequency_hz - closed_form(mode.m, mode.frequency_hz)) <= \
            bar.error_estimate_hz
