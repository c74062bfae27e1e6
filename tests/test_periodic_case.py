"""[periodic] in the case file: keys, refusals, builder meshes whose two faces match, and a
solved cell against a closed form.

Reference: TM01 of a circular guide, ω² = c²((p01/R)² + β²) with β = φ/L on a chain of cells
(D. M. Pozar, Microwave Engineering, 4th ed., §3.4, and the Floquet theorem); p01 from
scipy.special.jn_zeros.
"""

import json
import math

import numpy as np
import pytest
from scipy.constants import c as C0
from scipy.special import jn_zeros

from femcav.case import case_model, load_case
from femcav.errors import InputError
from femcav.solver import solve_model

PIPE = """
title = "Larkspur Microwave Works: a cell of round guide (made-up example)"
[geometry]
builder = "pillbox"
radius = "10 mm"
length = "8 mm"
[mesh]
size = "3.5 mm"
curved = true
[solve]
modes = 4
order = 2
"""


def _case(tmp_path, text) -> object:
    path = tmp_path / "case.toml"
    path.write_text(text, encoding="utf-8")
    return load_case(path)


def test_one_pair_with_its_phase_in_degrees(tmp_path):
    case = _case(tmp_path, PIPE + '[periodic]\npair = ["bottom", "top"]\nphase = "120 deg"\n')
    (pair,) = case.periodic
    assert (pair.wall_a, pair.wall_b) == ("bottom", "top")
    assert pair.phase_rad == pytest.approx(2 * math.pi / 3)


def test_an_array_of_pairs_and_a_bare_phase_in_radians(tmp_path):
    box = PIPE.replace('builder = "pillbox"\nradius = "10 mm"\nlength = "8 mm"',
                       'builder = "box"\nwidth = "10 mm"\nheight = "10 mm"\nlength = "10 mm"')
    case = _case(tmp_path, box + '[[periodic]]\npair = ["x_min", "x_max"]\nphase = 0.5\n'
                 '[[periodic]]\npair = ["z_min", "z_max"]\nphase = "-30 deg"\n')
    assert [p.phase_rad for p in case.periodic] == pytest.approx([0.5, -math.pi / 6])


@pytest.mark.parametrize("table, field, words", [
    ('[periodic]\npair = ["bottom", "lid"]\n', "periodic.pair", "no wall 'lid'"),
    ('[periodic]\npair = ["bottom", "top"]\nphase = "120"\n', "periodic.phase", "no unit"),
    ('[periodic]\npair = ["bottom", "top"]\nphase = "2 GHz"\n', "periodic.phase", "angle unit"),
    ('[periodic]\npair = ["bottom", "top"]\nphase = "400 deg"\n', "periodic.phase", "angle"),
    ('[periodic]\nphase = "1 rad"\n', "periodic.pair", "needs pair"),
    ('[periodic]\npair = ["bottom", "bottom"]\n', "periodic.pair", "two different faces"),
    ('[[periodic]]\npair = ["bottom", "top"]\n[[periodic]]\npair = ["top", "side"]\n',
     "periodic[1].pair", "in two periodic pairs"),
    ('[walls.top]\nkind = "pmc"\n[periodic]\npair = ["bottom", "top"]\n', "walls.top",
     "takes no wall kind"),
    ('[[periodic]]\npair = ["bottom", "top"]\n' * 4, "periodic", "at most 3"),
])
def test_mistakes_are_refused_at_their_key(tmp_path, table, field, words):
    with pytest.raises(InputError, match=words) as caught:
        _case(tmp_path, PIPE + table)
    assert caught.value.field == field


def test_a_body_of_revolution_takes_one_pair_only(tmp_path):
    # periodic along z only: its two end lines (tests/test_periodic_section.py solves it)
    text = PIPE.replace("order = 2", "order = 2\nazimuthal_orders = [0]")
    with pytest.raises(InputError, match="repeats along z only") as caught:
        _case(tmp_path, text + '[[periodic]]\npair = ["bottom", "top"]\n'
                               '[[periodic]]\npair = ["side", "axis"]\n')
    assert caught.value.field == "periodic"


def test_builder_meshes_a_round_guide_cell_whose_tm01_follows_the_band(tmp_path):
    case = _case(tmp_path, PIPE + '[periodic]\npair = ["bottom", "top"]\nphase = "90 deg"\n')
    result = solve_model(case_model(case), modes=4, order=2)
    phase = math.pi / 2
    # Pozar §3.4: k_c = p01 / R for TM01; β = φ / L
    tm01 = C0 / (2 * math.pi) * math.hypot(jn_zeros(0, 1)[0] / 0.010, phase / 0.008)
    nearest = min(result.modes, key=lambda m: abs(m.frequency_hz - tm01))
    assert nearest.frequency_hz == pytest.approx(tm01, rel=1e-3)
    assert all(m.phase_advance_rad == pytest.approx(phase) for m in result.modes)


def test_error_bars_pair_the_complex_modes_of_three_meshes(tmp_path):
    from femcav import run_case

    text = PIPE.replace("size = \"3.5 mm\"", "size = \"4 mm\"").replace(
        "order = 2", "order = 2\nerror_estimate = true")
    path = tmp_path / "case.toml"
    path.write_text(text + '[periodic]\npair = ["bottom", "top"]\nphase = "90 deg"\n',
                    encoding="utf-8")
    _, result, _ = run_case(path, out=tmp_path / "out")
    # every mode found its partner on the coarser meshes (a complex overlap taken as real
    # loses them), and the TM01 bar covers the closed form (Pozar §3.4)
    assert all(m.error_estimate_hz is not None for m in result.modes)
    tm01 = C0 / (2 * math.pi) * math.hypot(jn_zeros(0, 1)[0] / 0.010, (math.pi / 2) / 0.008)
    nearest = min(result.modes, key=lambda m: abs(m.frequency_hz - tm01))
    assert abs(nearest.frequency_hz - tm01) < 3 * nearest.error_estimate_hz


def test_travelling_modes_overlap_as_their_hermitian_inner_product(tmp_path):
    # the modes of a Hermitian pencil are orthonormal in (u, v)_M = ∫ ε u*·v (linear
    # algebra); a bilinear ∫ ε u·v would not vanish between two different complex modes
    from dataclasses import replace

    from femcav.post.field_overlap import result_overlaps

    case = _case(tmp_path, PIPE + '[periodic]\npair = ["bottom", "top"]\nphase = "90 deg"\n')
    result = solve_model(case_model(case), modes=3, order=2)
    turned = replace(result, modes=[replace(m, dofs=m.dofs * np.exp(0.7j))
                                    for m in result.modes])
    overlaps = result_overlaps(result, turned)
    assert overlaps.matrix == pytest.approx(np.eye(3), abs=1e-6)


def test_an_imported_mesh_whose_faces_differ_is_refused_at_the_place(tmp_path):
    # a pillbox with a tuning post through its top: the two ends cannot be meshed alike
    from femcav.geometry import build_part
    from femcav.io.mesh_files import write_msh

    write_msh(build_part("tuned_pillbox", radius=0.01, length=0.01, post_radius=0.002,
                         post_depth=0.003, mesh_size=0.004), tmp_path / "can.msh")
    case = _case(tmp_path, '[geometry]\nmesh = "can.msh"\n[regions.inside]\n[periodic]\n'
                 'pair = ["bottom", "top"]\nphase = "60 deg"\n')
    with pytest.raises(InputError, match=r"not meshed alike: the vertex at \(.* mm on "
                                         r"'top' has no partner on 'bottom'") as caught:
        solve_model(case_model(case), modes=2)
    assert caught.value.field == "periodic.pair"


def test_modes_json_and_the_report_name_the_pairs(tmp_path):
    from femcav import run_case

    path = tmp_path / "case.toml"
    path.write_text(PIPE + '[periodic]\npair = ["bottom", "top"]\nphase = "120 deg"\n',
                    encoding="utf-8")
    _, _, folder = run_case(path, out=tmp_path / "out")
    document = json.loads((folder / "modes.json").read_text())
    (pair,) = document["model"]["periodic"]
    assert pair["pair"] == ["bottom", "top"]
    assert pair["phase_rad"] == pytest.approx(2 * math.pi / 3)
    assert all(m["phase_advance_rad"] == pytest.approx(2 * math.pi / 3)
               for m in document["modes"])
    from femcav.viz.report import write_report
    write_report(document, {}, tmp_path / "report.html")
    report = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert "periodic pair bottom → top" in report and "phase advance 120°" in report
