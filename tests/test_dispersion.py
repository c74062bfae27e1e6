"""femcav dispersion: a periodic cell solved at a row of phases on one mesh.

References: the TE_m0 bands of an empty rectangular guide, f = c/(2π) √((mπ/a)² + (φ/L)²), and
its group velocity v_g = c² β / ω (D. M. Pozar, Microwave Engineering, 4th ed., §3.3, with
the Floquet theorem β = φ/L); the group velocity at the band edges 0 and π of a reciprocal
cell is zero (common practice).
"""

import csv
import json
import math

import numpy as np
import pytest
from scipy.constants import c as C0

from femcav.cli import main
from femcav.errors import InputError
from femcav.study.dispersion import parse_dispersion, run_dispersion

A, B, L = 0.02286, 0.01016, 0.010

GUIDE = """
title = "Larkspur Microwave Works: one cell of a WR-90 guide (made-up example)"
[geometry]
builder = "box"
width = "22.86 mm"
height = "10.16 mm"
length = "10 mm"
[mesh]
size = "5 mm"
[periodic]
pair = ["z_min", "z_max"]
[solve]
modes = 3
order = 2
"""


def te_m0(m, phase):
    return C0 / (2 * math.pi) * math.hypot(m * math.pi / A, phase / L)


def _write(tmp_path, text):
    path = tmp_path / "cell.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_guide_cell_band_and_velocities_follow_the_closed_form(tmp_path):
    path = _write(tmp_path, GUIDE + '[dispersion]\nfrom = "0 deg"\nto = "180 deg"\n'
                  "points = 7\n")
    assert main(["dispersion", str(path), "--out", str(tmp_path / "out"), "-q"]) == 0
    document = json.loads((tmp_path / "out" / "dispersion.json").read_text())
    assert document["cell_length_m"] == pytest.approx(L, rel=1e-9)
    phases = np.array(document["phases_rad"])
    assert phases == pytest.approx(np.radians(np.arange(0, 181, 30)))
    band = document["bands"][0]
    f = np.array(band["frequency_hz"])
    assert f == pytest.approx([te_m0(1, p) for p in phases], rel=4e-3)
    # band 2 is TE20; near π the folded TE10 branch (β = (2π - φ)/L) crosses below it, so
    # sorting by frequency would switch modes there; the overlap keeps TE20 to the end
    second = np.array(document["bands"][1]["frequency_hz"], dtype=float)
    assert second == pytest.approx([te_m0(2, p) for p in phases], rel=4e-3)
    inside = slice(1, -1)             # away from 0 and π, where the two velocities apply
    exact_vg = C0**2 * (phases / L) / (2 * math.pi * f)        # Pozar: v_g = c² β / ω
    assert np.array(band["group_velocity_energy_m_per_s"])[inside] == pytest.approx(
        exact_vg[inside], rel=2e-2)
    # central differences over 30° steps: a coarser check of the slope
    assert np.array(band["group_velocity_slope_m_per_s"])[inside] == pytest.approx(
        exact_vg[inside], rel=6e-2)
    assert band["group_velocity_slope_m_per_s"][0] == 0.0   # a band edge at phase 0
    assert band["phase_velocity_m_per_s"][0] is None
    assert band["phase_velocity_m_per_s"][3] == pytest.approx(2 * math.pi * f[3] * L / phases[3])
    with open(tmp_path / "out" / "dispersion.csv", newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert len(rows) == 7 * len(document["bands"]) and rows[0]["band"] == "1"
    assert float(rows[3]["frequency_hz"]) == pytest.approx(f[3])
    assert (tmp_path / "out" / "dispersion.png").stat().st_size > 1000


def test_values_give_the_phases_and_both_ways_are_refused():
    spec = parse_dispersion({"values": ["90 deg", 0.5, "0 deg"]})
    assert spec.phases_rad == pytest.approx((0.0, 0.5, math.pi / 2)) and spec.pair == 0
    with pytest.raises(InputError, match="not both") as caught:
        parse_dispersion({"values": ["90 deg"], "points": 3})
    assert caught.value.field == "dispersion.points"
    with pytest.raises(InputError, match="needs to") as caught:
        parse_dispersion({"from": "0 deg", "points": 3})
    assert caught.value.field == "dispersion.to"


def test_a_case_without_periodic_faces_is_refused_before_meshing(tmp_path, capsys):
    text = GUIDE.replace('[periodic]\npair = ["z_min", "z_max"]\n', "")
    path = _write(tmp_path, text + '[dispersion]\nvalues = ["90 deg"]\n')
    assert main(["dispersion", str(path), "--out", str(tmp_path / "out")]) == 2
    message = capsys.readouterr().err
    assert "cell.toml: periodic: a dispersion needs a periodic cell" in message
    assert not (tmp_path / "out").exists()
    path = _write(tmp_path, GUIDE)
    with pytest.raises(InputError, match=r"no \[dispersion\] table"):
        run_dispersion(path, out=tmp_path / "out")


def test_a_second_run_reuses_the_phases_it_shares_on_their_mesh(tmp_path):
    coarse = _write(tmp_path, GUIDE + '[dispersion]\nvalues = ["0 deg", "90 deg"]\n')
    first, folder = run_dispersion(coarse, out=tmp_path / "out")
    stored = {p.name: p.stat().st_mtime_ns for p in (folder / "points").glob("*.json")}
    assert len(stored) == 2
    finer = _write(tmp_path, GUIDE + '[dispersion]\nvalues = ["0 deg", "45 deg", "90 deg"]\n')
    second, _ = run_dispersion(finer, out=tmp_path / "out")
    again = {p.name: p.stat().st_mtime_ns for p in (folder / "points").glob("*.json")}
    assert len(again) == 3 and all(again[name] == t for name, t in stored.items())
    for band_one, band_two in zip(first["bands"], second["bands"]):
        assert band_two["frequency_hz"][0::2] == band_one["frequency_hz"]
    # the new phase sits on the same band (Pozar §3.3), solved on the stored mesh
    assert second["bands"][0]["frequency_hz"][1] == pytest.approx(te_m0(1, math.pi / 4),
                                                                  rel=4e-3)


@pytest.mark.slow
def test_phases_solved_in_two_processes_equal_those_solved_here(tmp_path):
    path = _write(tmp_path, GUIDE + '[dispersion]\nfrom = "0 deg"\nto = "180 deg"\npoints = 4\n')
    here, _ = run_dispersion(path, out=tmp_path / "here")
    there, _ = run_dispersion(path, out=tmp_path / "there", jobs=2)
    for a, b in zip(here["bands"], there["bands"]):
        assert np.array(b["frequency_hz"], dtype=float) == pytest.approx(
            np.array(a["frequency_hz"], dtype=float), rel=1e-9, nan_ok=True)


def test_one_symmetry_class_is_solved_and_both_are_refused(tmp_path):
    # TE10 has no tangential H on the guide's middle plane x = a/2: a PMC cut keeps its
    # band (Pozar §3.3); "both" would be two dispersions in one
    text = GUIDE + '[dispersion]\nvalues = ["90 deg"]\n[symmetry]\nx = "pmc"\n'
    document, _ = run_dispersion(_write(tmp_path, text), out=tmp_path / "out")
    assert document["bands"][0]["frequency_hz"][0] == pytest.approx(te_m0(1, math.pi / 2),
                                                                   rel=4e-3)
    with pytest.raises(InputError, match="one symmetry class") as caught:
        run_dispersion(_write(tmp_path, text.replace('"pmc"', '"both"')), out=tmp_path / "b")
    assert caught.value.field == "symmetry"
