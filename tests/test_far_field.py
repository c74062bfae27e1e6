"""The far field of a radiating mode (post.far_field), from the fields on the absorbing
layer's inner surface.

References:
- The lowest TE and TM modes of a dielectric sphere radiate as a magnetic and an electric
  dipole (Gastine, Courtois and Dormann, IEEE T-MTT 15(12), 1967; the exact complex
  frequencies from femcav.analytic.dielectric_sphere, checked against the characteristic
  equations in tests/test_open_resonators.py).
- A dipole's radiation intensity goes as sin²θ from its axis and its directivity is 3/2
  (1.76 dBi) (C. A. Balanis, Antenna Theory, 3rd ed., §4.2 for the electric dipole and
  §5.2 for the small loop, the magnetic dipole; from memory).
- Power conservation: the power through the surface equals the power of the pattern, and
  Q = ω W / P (common practice).
"""

import json
import math

import numpy as np
import pytest
from dataclasses import replace

from test_open_resonators import DIPOLE_WALLS, exact_sphere_mode, nearest, sphere_model

from femcav.post.far_field import far_field
from femcav.post.point_fields import Mirror
from femcav.solver import solve_model

EIGHTH = Mirror({"x": 0.0, "y": 0.0, "z": 0.0})   # the sphere model is cut by three planes


def dipole_pattern(kind: str):
    exact = exact_sphere_mode(36.0, kind)
    result = solve_model(sphere_model(36.0, kind, 0.004, 0.01), modes=2, order=2,
                         near_hz=exact.real)
    label = " ".join(f"{axis}:{wall.upper()}" for axis, wall in zip("xyz", DIPOLE_WALLS[kind]))
    mode = replace(nearest(result, exact), symmetry=label)
    return exact, result.space, mode, far_field(result.space, mode, mirror=EIGHTH)


@pytest.mark.parametrize("kind", ["TE", "TM"])
def test_the_sphere_dipole_modes_radiate_as_dipoles(kind):
    exact, space, mode, pattern = dipole_pattern(kind)
    # measured on this coarse mesh: Q from the flux -1.6 % (TE) and -4.1 % (TM) from the exact
    # Q (issue 19 allows 5 % on Q in 3D); on the finer mesh of test_open_resonators 0.3 % and
    # 1.4 %, with D 1.5045 and 1.5006 and power balances 0.998 and 0.987
    assert pattern.directivity.max() == pytest.approx(1.5, rel=0.01)
    # the dipole stands along z: U / U_max = sin²θ in every plane through z
    theta = np.radians(pattern.theta_deg)[:, None]
    shape = pattern.intensity / pattern.intensity.max()
    assert np.max(np.abs(shape - np.sin(theta) ** 2)) < 0.02
    assert pattern.peak_direction_deg[0] == pytest.approx(90.0)
    assert pattern.power_balance == pytest.approx(1.0, abs=0.03)
    assert pattern.q_from_flux == pytest.approx(exact.real / (2 * exact.imag), rel=0.05)
    # the reflected surface must carry the mode's parity: with the z plane's kind swapped,
    # the two halves cancel instead of adding and the check above fails
    swapped = {"z:PMC": "z:PEC", "z:PEC": "z:PMC"}
    wrong = " ".join(swapped.get(part, part) for part in mode.symmetry.split())
    broken = far_field(space, replace(mode, symmetry=wrong), mirror=EIGHTH)
    assert abs(broken.power_balance - 1.0) > 0.1


def test_a_case_writes_the_pattern_its_picture_and_the_directivity(tmp_path):
    from femcav.cli import main

    exact = exact_sphere_mode(36.0, "TE")
    case = tmp_path / "sphere.toml"
    case.write_text(f"""
title = "Larkspur Microwave Works: radiating sphere (made-up scenario)"
[geometry]
builder = "sphere"
radius = "10 mm"
[regions.sphere]
eps_r = 36
mesh_size = "5 mm"
[mesh]
size = "12 mm"
curved = true
[symmetry]
x = "pec"
y = "pec"
z = "pmc"
[solve]
order = 2
modes = 1
near = {exact.real!r}
""")
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out)]) == 0
    document = json.loads((out / "modes.json").read_text())
    (mode,) = document["modes"]
    assert mode["far_field"]["directivity_dbi"] == pytest.approx(10 * math.log10(1.5), abs=0.05)
    assert mode["directivity_dbi"] == mode["far_field"]["directivity_dbi"]
    assert mode["far_field"]["q_from_flux"] == pytest.approx(mode["q_radiation"], rel=0.05)
    rows = (out / "far_field.csv").read_text().splitlines()
    assert rows[0] == "mode,theta_deg,phi_deg,e_theta_v,e_phi_v,directivity_dbi"
    assert len(rows) == 1 + 37 * 72
    assert "D (dBi)" in (out / "table.txt").read_text().splitlines()[0]
    assert main(["show", str(out)]) == 0
    assert (out / "far_field_01.png").stat().st_size > 10_000
    assert "Mode 1: radiation pattern" in (out / "report.html").read_text()
