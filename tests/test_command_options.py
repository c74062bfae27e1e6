"""Command-line options and result files the README promises, each against the box's closed
form (Pozar, Microwave Engineering, 4th ed., §6.3, from memory; femcav.analytic.box): --order
and --method, table.txt, femcav.run_case, the Weyl share of a symmetry class, [sweep.second]
with --jobs (show rebuilding report.html: tests/test_pictures.py)."""

import json

import numpy as np
import pytest

import femcav
from femcav.analytic.box import box_modes
from femcav.cli import main

A, B, D = 0.02286, 0.01016, 0.030
HALF_BOX = f"""
title = "Made-up half box"
[geometry]
builder = "box"
width = "{A * 1e3} mm"
height = "{B * 1e3} mm"
length = "{D * 1e3} mm"
[mesh]
size = "4 mm"
[symmetry]
x = "pmc"
[solve]
modes = 3
"""


def odd_x_modes(count):
    # a PMC plane at x = a/2 keeps the modes with odd x index (see tests/test_forms.py)
    return [f for f, label in box_modes(A, B, D, 3e10) if int(label[2]) % 2 == 1][:count]


def test_order_method_table_and_weyl_share(tmp_path, capsys):
    case = tmp_path / "half.toml"
    case.write_text(HALF_BOX)
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out), "--order", "2", "--method",
                 "iterative", "--no-report"]) == 0
    printed = capsys.readouterr()
    assert "eigen method iterative" in printed.err
    document = json.loads((out / "modes.json").read_text())
    assert document["order"] == 2
    # order 2 at 4 mm: well inside 2e-3 of the closed form (order 1 is off by about 1e-2)
    np.testing.assert_allclose([m["frequency_hz"] for m in document["modes"]], odd_x_modes(3),
                               rtol=2e-3)
    table = (out / "table.txt").read_text()
    assert table.strip() and table.strip() in printed.out
    assert len([line for line in table.splitlines() if "GHz" in line]) == 3
    # one symmetry class of two: half the modes of the part listed; the optical volume is
    # the whole part's (Weyl's estimate scaled by the share, README "Output files")
    weyl = document["weyl"]
    assert weyl["listed_share"] == 0.5
    assert weyl["optical_volume_m3"] == pytest.approx(A * B * D, rel=1e-9)


def test_run_case_from_python(tmp_path):
    case = tmp_path / "half.toml"
    case.write_text(HALF_BOX)
    loaded, result, folder = femcav.run_case(case, out=tmp_path / "api", order=2)
    assert folder == tmp_path / "api" and (folder / "modes.json").is_file()
    assert loaded.title == "Made-up half box" and result.order == 2
    np.testing.assert_allclose([m.frequency_hz for m in result.modes], odd_x_modes(3),
                               rtol=2e-3)
    assert all(m.checks.passed for m in result.modes)


def test_second_sweep_parameter_on_the_command_line(tmp_path, monkeypatch):
    # --jobs reaches the sweep (its two processes are exercised in tests/test_sweep.py);
    # here the points are solved in this process, which is faster for four small points.
    import femcav.study.sweep as sweep_module

    asked = []
    run_sweep = sweep_module.run_sweep

    def recorded(*args, jobs=1, **kwargs):
        asked.append(jobs)
        return run_sweep(*args, jobs=1, **kwargs)
    monkeypatch.setattr(sweep_module, "run_sweep", recorded)
    case = tmp_path / "grid.toml"
    case.write_text(f"""
title = "Made-up box, length and width grid"
[geometry]
builder = "box"
width = "{A * 1e3} mm"
height = "{B * 1e3} mm"
length = "30 mm"
[mesh]
size = "4 mm"
[solve]
modes = 2
order = 2
[sweep]
parameter = "geometry.length"
values = ["28 mm", "32 mm"]
[sweep.second]
parameter = "geometry.width"
values = ["20 mm", "{A * 1e3} mm"]
""")
    out = tmp_path / "out"
    assert main(["sweep", str(case), "--out", str(out), "--jobs", "2", "-q"]) == 0
    assert asked == [2]
    document = json.loads((out / "sweep.json").read_text())
    assert [p["parameter"] for p in document["parameters"]] == ["geometry.length",
                                                               "geometry.width"]
    # the grid of both, every point against the closed form of its own box
    grid = {tuple(round(v, 9) for v in p["values"]) for p in document["points"]}
    assert grid == {(d, a) for d in (0.028, 0.032) for a in (0.02, round(A, 9))}
    for point in document["points"]:
        d, a = point["values"]
        exact = [f for f, _ in box_modes(a, B, d, 3e10)][:2]
        np.testing.assert_allclose([m["frequency_hz"] for m in point["modes"][:2]], exact,
                                   rtol=2e-3)
    # tracks run along the length, one set per width
    assert sorted({t["second_value"] for t in document["tracks"]}) == pytest.approx([0.02, A])
    assert all(len(t["frequency_hz"]) == 2 for t in document["tracks"])
