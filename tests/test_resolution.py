"""Modes the mesh cannot resolve are flagged (table, modes.json, exit status 3), whatever the
solver path; a target far above what the mesh holds, and fewer modes than asked, are said."""

import json
import math

import pytest
from scipy.constants import c as C0
from scipy.special import jn_zeros

from conftest import box_case
from femcav import Material, make_model, solve_model
from femcav.analytic.box import lowest_box_frequencies
from femcav.cli import main
from femcav.geometry import build_part

A, B, D = 0.02286, 0.01016, 0.030     # a WR-90 section 30 mm long

BOX_CASE = 'title = "coarse box"\n' + box_case(
    "4 mm", 60, dims=(f"{A * 1e3} mm", f"{B * 1e3} mm", f"{D * 1e3} mm"))


@pytest.fixture(scope="module")
def coarse_box_modes():
    model = make_model(build_part("box", width=A, height=B, length=D, mesh_size=0.004),
                       {"inside": Material()}, {})
    return solve_model(model, modes=60, form="E", order=1).modes


def test_resolved_modes_are_close_and_the_others_flagged(coarse_box_modes):
    # Box closed form: f = c/2 sqrt((m/a)² + (n/b)² + (l/d)²) (Pozar, Microwave
    # Engineering, 4th ed., §6.3), frequencies of the sorted lists compared.
    exact = lowest_box_frequencies(A, B, D, len(coarse_box_modes))
    resolved = [m for m in coarse_box_modes if m.resolution.resolved]
    unresolved = [m for m in coarse_box_modes if not m.resolution.resolved]
    assert resolved and unresolved
    for mode in resolved:    # "resolved" promises a few per cent at most
        assert abs(mode.frequency_hz / exact[mode.index - 1] - 1) < 0.05
    worst = max(abs(m.frequency_hz / exact[m.index - 1] - 1) for m in coarse_box_modes)
    assert worst > 0.05      # the check has something to catch on this mesh
    # points per wavelength fall as the frequency rises, for one mesh
    assert coarse_box_modes[0].resolution.points_per_wavelength > \
        coarse_box_modes[-1].resolution.points_per_wavelength


def test_power_mean_counts_where_the_energy_is():
    import numpy as np

    from femcav.post.resolution import mode_resolution

    # two elements: 1 mm where all the energy is, 10 mm where none is (10 GHz, vacuum,
    # λ = 30 mm): the coarse element does not count
    h, n = np.array([1e-3, 10e-3]), np.ones(2)
    fine = mode_resolution(10e9, 1, h, n, np.array([1.0, 0.0]))
    assert fine.points_per_wavelength == pytest.approx(C0 / 10e9 / 1e-3)
    # with a tenth of the energy in the coarse element, (h/λ)² averages to
    # 0.9 (1/30)² + 0.1 (1/3)²: the coarse part dominates
    mixed = mode_resolution(10e9, 1, h, n, np.array([0.9, 0.1]))
    expected = 1 / math.sqrt(0.9 * (1e-3 / (C0 / 10e9)) ** 2 + 0.1 * (10e-3 / (C0 / 10e9)) ** 2)
    assert mixed.points_per_wavelength == pytest.approx(expected)
    # a dielectric (ε_r = 4) halves the wavelength
    assert mode_resolution(10e9, 1, h, 2 * n, np.array([1.0, 0.0])).points_per_wavelength \
        == pytest.approx(fine.points_per_wavelength / 2)


def test_cli_flags_unresolved_modes_everywhere(tmp_path, capsys):
    from femcav.post.resolution import MIN_POINTS_PER_WAVELENGTH

    case = tmp_path / "case.toml"
    case.write_text(BOX_CASE)
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out), "-q", "--no-report"]) == 3
    captured = capsys.readouterr()
    assert "NOT RESOLVED" in captured.out
    assert "not resolved by the mesh" in captured.err and "refine the mesh" in captured.err
    assert "Traceback" not in captured.err
    document = json.loads((out / "modes.json").read_text())
    assert document["modes_resolved"] is False
    assert document["min_points_per_wavelength"] == MIN_POINTS_PER_WAVELENGTH[1]
    rows = document["modes"]
    assert rows[0]["resolved"] is True and rows[-1]["resolved"] is False
    assert all(r["points_per_wavelength"] > 0 for r in rows)
    header = (out / "modes.csv").read_text().splitlines()[0].split(",")
    assert {"points_per_wavelength", "resolved"} <= set(header)


def test_a_target_above_the_mesh_is_said_plainly(tmp_path, capsys):
    case = tmp_path / "case.toml"
    case.write_text(BOX_CASE)
    assert main(["solve", str(case), "--out", str(tmp_path / "out"), "-q", "--no-report",
                 "--near", "500 GHz", "--modes", "3"]) == 3
    err = capsys.readouterr().err
    assert "500 GHz is above what this mesh can resolve" in err


def test_fewer_modes_than_asked_is_said(tmp_path, capsys, monkeypatch):
    import femcav.solve_command

    # the fields of 200 modes are not what this test is about: skip writing them
    monkeypatch.setattr(femcav.solve_command, "write_vtu", lambda result, path: path.write_text(""))
    case = tmp_path / "case.toml"
    # a 15 mm mesh at order 2: 250 free DOFs of which 33 are gradients, so at most 217
    # modes above zero frequency: fewer than the 240 asked for
    case.write_text(BOX_CASE.replace('size = "4 mm"', 'size = "15 mm"'))
    out = tmp_path / "out"
    code = main(["solve", str(case), "--out", str(out), "-q", "--no-report", "--modes", "240",
                 "--order", "2"])
    document = json.loads((out / "modes.json").read_text())
    returned = document["modes_returned"]
    assert returned == len(document["modes"]) < 240
    assert document["request"]["modes"] == 240
    assert f"240 modes asked for, {returned} returned" in capsys.readouterr().err
    assert code == 3      # and most of those it has are far from resolved


def test_axisymmetric_path_flags_too(tmp_path, capsys):
    # Pillbox TM0n0 modes: f = c x_0n / (2π a) (Pozar §6.3; zeros from scipy.special);
    # a section mesh of 5 mm at order 1 resolves the first and not the twelfth.
    radius, length = 0.02, 0.01
    case = tmp_path / "case.toml"
    case.write_text(f"""
[geometry]
builder = "pillbox"
radius = "{radius * 1e3} mm"
length = "{length * 1e3} mm"
[mesh]
size = "5 mm"
[solve]
modes = 12
order = 1
azimuthal_orders = [0]
""")
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out), "-q", "--no-report"]) == 3
    rows = json.loads((out / "modes.json").read_text())["modes"]
    assert rows[0]["resolved"] is True and rows[-1]["resolved"] is False
    first = C0 * jn_zeros(0, 1)[0] / (2 * math.pi * radius)
    assert rows[0]["frequency_hz"] == pytest.approx(first, rel=0.05)
    assert "not resolved by the mesh" in capsys.readouterr().err
