"""Anisotropic and magnetic materials from the case file (issue 27): uniaxial and full-tensor
eps_r and mu_r, a loss tangent per direction, a magnetic loss tangent, the material library.

References:
- A PEC box filled with a diagonal medium: the separable solution of
  tests/test_complex_materials.py (derived there from ∇×∇×E = ∇(∇·E) - ∇²E, Pozar,
  Microwave Engineering, 4th ed., §1.3), here with diag(ε) the uniaxial tensor
  ε⊥ (I - aaᵀ) + ε∥ aaᵀ for an axis a along each box axis.
- The TE_m0p modes of a box a x b x d have E along y only (Pozar §6.3), so a uniaxial
  filling stores their whole electric energy across an axis along z (Q_d = 1/tan δ⊥) and
  along an axis along y (Q_d = 1/tan δ∥): the directional loss by perturbation reduces to
  these exactly.
- A box filled with μ_r (1 - j tan δ_m): the stiffness matrix of the E form is exactly
  1/(1 - j tan δ_m) times the lossless one, so k0² = k0,lossless² / (1 - j tan δ_m), f =
  f0 / sqrt(1 - j tan δ_m) and Q = Re f / (2 Im f) (Pozar §6.1 for Q from a complex
  frequency), which is 1/tan δ_m to first order; the magnetic filling of a filled box is 1.
"""

from pathlib import Path

import numpy as np
import pytest

from femcav.case import case_from_data
from femcav.errors import InputError
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import solve_model
from test_complex_materials import A, B, D, anisotropic_box_frequencies

PERPENDICULAR, PARALLEL = 9.27, 11.34       # sapphire near 4 K (Krupka et al. 1999, memory)


@pytest.fixture(scope="module")
def box_mesh():
    return build_part("box", width=A, height=B, length=D, mesh_size=0.005)


def _region(**keys) -> Material:
    """The material of [regions.inside] of a box case with the given keys."""
    data = {"geometry": {"builder": "box", "width": A, "height": B, "length": D},
            "regions": {"inside": keys}}
    return case_from_data(data, Path("case.toml")).regions["inside"]


def _solve(mesh, material, **options):
    return solve_model(make_model(mesh, {"inside": material}, {}), **options)


@pytest.mark.parametrize("axis", [0, 1, 2])
def test_uniaxial_box_against_the_separable_solution(box_mesh, axis):
    direction = [0, 0, 0]
    direction[axis] = 1
    material = _region(eps_r={"perpendicular": PERPENDICULAR, "parallel": PARALLEL,
                              "axis": direction})
    diagonal = [PERPENDICULAR] * 3
    diagonal[axis] = PARALLEL
    assert np.allclose(material.eps_tensor, np.diag(diagonal))
    result = _solve(box_mesh, material, modes=5, order=2)
    exact = anisotropic_box_frequencies(diagonal, 5)
    found = np.array([m.frequency_hz for m in result.modes])
    # order 2 on a 5 mm mesh: measured within 1.5e-3 (as the diagonal test of
    # test_complex_materials); exact pairs of modes are at least 1e-3 apart here
    assert np.allclose(found, exact, rtol=3e-3)
    assert all(m.checks.passed for m in result.modes)


def test_a_tilted_axis_is_the_rotated_tensor(box_mesh):
    # a uniaxial medium with its axis in the x-z plane at 30° from z: the tensor R diag R^T
    angle = np.radians(30)
    axis = [np.sin(angle), 0.0, np.cos(angle)]
    material = _region(eps_r={"perpendicular": 2.0, "parallel": 5.0, "axis": axis})
    rotation = np.array([[np.cos(angle), 0, np.sin(angle)], [0, 1, 0],
                         [-np.sin(angle), 0, np.cos(angle)]])
    assert np.allclose(material.eps_tensor, rotation @ np.diag([2.0, 2.0, 5.0]) @ rotation.T)
    # and the full-tensor key gives the same material
    rows = material.eps_tensor.tolist()
    assert np.allclose(_region(eps_r=rows).eps_tensor, material.eps_tensor)


def test_directional_loss_tangents_by_perturbation_and_in_the_complex_solve(box_mesh):
    t_perpendicular, t_parallel = 1e-3, 4e-3
    eps = {"perpendicular": PERPENDICULAR, "parallel": PARALLEL}
    tangents = {"perpendicular": t_perpendicular, "parallel": t_parallel}
    across = _solve(box_mesh, _region(eps_r={**eps, "axis": "z"}, tan_delta=tangents),
                    modes=1, order=2)
    along = _solve(box_mesh, _region(eps_r={**eps, "axis": "y"}, tan_delta=tangents),
                   modes=1, order=2)
    # TE101: E along y only, so its energy lies across a z axis and along a y axis; the
    # discrete mode's field leaks a little into the other components (measured 1.5e-4 of
    # the energy on this unstructured 5 mm mesh, order 2)
    loss = across.modes[0].losses
    assert loss.filling_factor_perpendicular["inside"] == pytest.approx(1, abs=1e-3)
    assert loss.q_dielectric == pytest.approx(1 / t_perpendicular, rel=3e-3)
    assert along.modes[0].losses.filling_factor_parallel["inside"] == pytest.approx(1, abs=1e-3)
    assert along.modes[0].losses.q_dielectric == pytest.approx(1 / t_parallel, rel=3e-3)
    # a tilted axis mixes the two: the perturbation and the complex solve agree to O(tan δ)
    tilted = _region(eps_r={**eps, "axis": [1, 1, 1]}, tan_delta=tangents)
    real = _solve(box_mesh, tilted, modes=3, order=1)
    lossy = _solve(box_mesh, tilted, modes=3, order=1, losses_inside=True)
    assert lossy.eigen_stats.method == "arnoldi"
    for mode, partner in zip(real.modes, lossy.modes):
        report = mode.losses
        parallel = report.filling_factor_parallel["inside"]
        assert 0.05 < parallel < 0.95         # both directions carry energy
        assert parallel + report.filling_factor_perpendicular["inside"] == pytest.approx(1)
        expected = 1 / ((1 - parallel) * t_perpendicular + parallel * t_parallel)
        assert report.q_dielectric == pytest.approx(expected, rel=1e-12)
        # measured 1.1e-6 at worst, O(tan δ²)
        assert partner.q_eigenvalue == pytest.approx(report.q_dielectric, rel=t_parallel**2)


def test_complex_permeability_gives_q_magnetic(box_mesh):
    tan_m = 2e-3
    material = _region(eps_r=2.0, mu_r=f"{1.5}-{1.5 * tan_m}j")
    assert material.mu_r == pytest.approx(1.5) and material.mu_tan_delta == pytest.approx(tan_m)
    assert _region(eps_r=2.0, mu_r=1.5, mu_tan_delta=tan_m) == material
    lossless = _solve(box_mesh, Material(eps_r=2.0, mu_r=1.5), modes=3, order=2)
    lossy = _solve(box_mesh, material, modes=3, order=2, losses_inside=True)
    exact = (np.array([m.frequency_hz for m in lossless.modes])
             / np.sqrt(1 - 1j * tan_m))
    found = np.array([m.complex_frequency_hz for m in lossy.modes])
    assert np.allclose(found, exact, rtol=1e-8)
    for mode, f in zip(lossy.modes, exact):
        assert mode.q_eigenvalue == pytest.approx(f.real / (2 * f.imag), rel=1e-8)
        assert mode.q_eigenvalue * tan_m == pytest.approx(1, abs=1e-5)
        assert mode.checks.passed
    real = _solve(box_mesh, material, modes=3, order=2, form="H")
    for mode in real.modes:
        assert mode.losses.magnetic_energy_filling["inside"] == pytest.approx(1)
        assert mode.losses.q_magnetic == pytest.approx(1 / tan_m, rel=1e-9)
        assert mode.losses.q_dielectric is None
        assert mode.losses.q_total == pytest.approx(1 / tan_m, rel=1e-9)


def test_uniaxial_and_tensor_permeability_keys():
    uniaxial = _region(mu_r={"perpendicular": 2.0, "parallel": 3.0, "axis": "x"})
    assert np.allclose(uniaxial.mu_tensor, np.diag([3.0, 2.0, 2.0]))
    gyro = _region(mu_r=[[2, "0.5j", 0], ["-0.5j", 2, 0], [0, 0, 1]])
    assert np.allclose(gyro.mu_tensor, [[2, 0.5j, 0], [-0.5j, 2, 0], [0, 0, 1]])


@pytest.mark.parametrize("keys, field, words", [
    ({"eps_r": {"perpendicular": 9, "parallel": 11, "axis": [0, 0, 0]}},
     "regions.inside.eps_r.axis", "not zero"),
    ({"eps_r": {"perpendicular": 9, "parallel": 11, "axis": "w"}},
     "regions.inside.eps_r.axis", '"x", "y", "z"'),
    ({"eps_r": {"perpendicular": 9, "axis": "z"}}, "regions.inside.eps_r.parallel", "missing"),
    ({"eps_r": {"perpendicular": 9, "parallel": 0.001, "axis": "z"}},
     "regions.inside.eps_r.parallel", "from 0.01"),
    ({"eps_r": {"perpendicular": 9, "parallel": 11, "axis": "z", "tilt": 1}},
     "regions.inside.eps_r.tilt", "unknown key"),
    ({"eps_r": [[2, 1, 0], [0, 2, 0], [0, 0, 2]]}, "regions.inside.eps_r", "symmetric"),
    ({"eps_r": [[2, "1j", 0], ["0.5j", 2, 0], [0, 0, 2]]}, "regions.inside.eps_r",
     "Hermitian"),
    ({"eps_r": [[1, 2, 0], [2, 1, 0], [0, 0, 1]]}, "regions.inside.eps_r",
     "positive definite"),
    ({"eps_r": [[1, 0], [0, 1]]}, "regions.inside.eps_r", "three rows"),
    ({"eps_r": [[1, 0, 0], [0, "x", 0], [0, 0, 1]]}, "regions.inside.eps_r[1][1]",
     "complex number string"),
    ({"eps_r": 9.8, "tan_delta": {"perpendicular": 1e-4}}, "regions.inside.tan_delta",
     "uniaxial eps_r"),
    ({"eps_r": {"perpendicular": 9, "parallel": 11, "axis": "z"},
      "tan_delta": {"along": 1e-4}}, "regions.inside.tan_delta.along", "unknown key"),
    ({"mu_r": "2+0.1j"}, "regions.inside.mu_r", "imaginary part"),
    ({"mu_r": "2-0.1j", "mu_tan_delta": 0.01}, "regions.inside.mu_tan_delta", "not both"),
    ({"mu_r": "two"}, "regions.inside.mu_r", "complex number"),
    ({"material": "unobtainium"}, "regions.inside.material", "must be one of"),
])
def test_bad_media_are_refused_at_their_key(keys, field, words):
    with pytest.raises(InputError, match=words) as caught:
        _region(**keys)
    assert caught.value.field == field


def test_the_library_gives_sapphire_and_user_values_override():
    sapphire = _region(material="sapphire")
    assert sapphire.uniaxial is not None and sapphire.uniaxial.axis == (0.0, 0.0, 1.0)
    # ε⊥ 9.39, ε∥ 11.59 at room temperature (Krupka et al. 1999, from memory): the library
    # holds those within their quoted spread
    assert 9.27 <= sapphire.uniaxial.perpendicular <= 9.4
    assert 11.34 <= sapphire.uniaxial.parallel <= 11.6
    turned = _region(material="sapphire",
                     eps_r={"perpendicular": 9.39, "parallel": 11.59, "axis": "x"})
    assert turned.uniaxial.axis == (1.0, 0.0, 0.0)
    assert turned.uniaxial.tan_delta_parallel == sapphire.uniaxial.tan_delta_parallel
    alumina = _region(material="alumina", tan_delta=2e-5)
    assert alumina.eps_r == pytest.approx(9.8) and alumina.tan_delta == 2e-5
    # a scalar eps_r over sapphire drops the library's directional tangents with it
    assert _region(material="sapphire", eps_r=10.0).tan_delta == 0.0
    ferrite = _region(material="ferrite_example")
    assert ferrite.mu_tan_delta > 0 and ferrite.lossy


def test_a_study_cannot_vary_a_tensor_as_one_number():
    from femcav.case_parameters import check_parameter_exists, parse_axis

    data = {"geometry": {"builder": "box", "width": A, "height": B, "length": D},
            "regions": {"inside": {"eps_r": {"perpendicular": 9.3, "parallel": 11.3,
                                             "axis": "z"}}}}
    case = case_from_data(data, Path("case.toml"))
    axis = parse_axis({"parameter": "regions.inside.eps_r", "from": 9, "to": 10,
                       "points": 3}, "sweep")
    with pytest.raises(InputError, match="tensor") as caught:
        check_parameter_exists(axis, case)
    assert caught.value.field == "sweep.parameter"
    # its loss tangent is one number for both directions: that may be varied
    check_parameter_exists(parse_axis({"parameter": "regions.inside.tan_delta",
                                       "values": [1e-4, 2e-4]}, "sweep"), case)


def test_a_symmetry_cut_needs_a_tensor_symmetric_about_it():
    def case(axis):
        data = {"geometry": {"builder": "box", "width": A, "height": B, "length": D},
                "regions": {"inside": {"eps_r": {"perpendicular": 9.3, "parallel": 11.3,
                                                 "axis": axis}}},
                "symmetry": {"x": "both"}}
        return case_from_data(data, Path("case.toml"))
    assert case("z").symmetry == {"x": ("pec", "pmc")}     # along the cut plane: fine
    assert case("x").symmetry                               # normal to it: fine too
    with pytest.raises(InputError, match="not symmetric about the cut plane") as caught:
        case([1, 0, 1])                                     # tilted across it
    assert caught.value.field == "regions.inside.eps_r"


def test_a_tce_per_direction_needs_a_uniaxial_region():
    data = {"geometry": {"builder": "box", "width": A, "height": B, "length": D},
            "regions": {"inside": {"eps_r": 9.8, "tce": {"perpendicular": "100 ppm/K"}}}}
    with pytest.raises(InputError, match="uniaxial") as caught:
        case_from_data(data, Path("case.toml"))
    assert caught.value.field == "regions.inside.tce"
    data["regions"]["inside"]["eps_r"] = {"perpendicular": 9.3, "parallel": 11.3, "axis": "z"}
    data["regions"]["inside"]["tce"] = {"perpendicular": "100 ppm/K", "parallel": "1 %/K"}
    with pytest.raises(InputError, match="unit") as caught:
        case_from_data(data, Path("case.toml"))
    assert caught.value.field == "regions.inside.tce.parallel"
    data["regions"]["inside"]["tce"] = {"perpendicular": "100 ppm/K"}
    spec = case_from_data(data, Path("case.toml")).temperature
    assert spec.tce["inside"] == pytest.approx((1e-4, 0.0))
