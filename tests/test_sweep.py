"""Sweeps: every point against a closed form, modes tracked through a crossing by field
overlap, resuming an interrupted sweep, the case-file checks."""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import swept_folder

from femcav.analytic.box import box_modes
from femcav.analytic.slab import slab_te_m0p_frequencies
from femcav.cli import main
from femcav.errors import InputError
from femcav.study.sweep import run_sweep

A, B = 0.02286, 0.01016

# At 3 mm (order 2) the nine modes of every point were within 3.5e-4 of the formula,
# against the 3e-3 asked below (2.2 mm gave 1.1e-4 in 2.5 times the time).
BOX_SWEEP = f"""
title = "Made-up WR-90 cavity, length sweep"
[geometry]
builder = "box"
width = "{A * 1e3} mm"
height = "{B * 1e3} mm"
length = "28 mm"
[mesh]
size = "3 mm"
[solve]
modes = 9
order = 2
[sweep]
parameter = "geometry.length"
values = ["28 mm", "29.5 mm", "31 mm", "32.5 mm"]
"""


def labelled(d):
    return box_modes(A, B, d, 18e9)


@pytest.fixture(scope="module")
def box_sweep(tmp_path_factory):
    return swept_folder(tmp_path_factory.mktemp("sweep"), BOX_SWEEP)


def test_tracks_follow_the_crossing_by_field_overlap(box_sweep):
    # TE103 falls through TM110 near d = 3b = 30.5 mm; TM110 does not depend on d (Pozar,
    # Microwave Engineering, 4th ed., §6.3, from memory). Sort order would swap them there.
    document, _, _ = box_sweep
    lengths = document["parameters"][0]["values"]
    tm110 = labelled(lengths[0])
    f_tm110 = next(f for f, name in tm110 if name == "TM110")
    f_te103 = [next(f for f, name in labelled(d) if name == "TE103") for d in lengths]
    assert f_te103[0] > f_tm110 > f_te103[-1]       # they do cross inside the sweep
    by_start = {round(t["frequency_hz"][0] / 1e7): t for t in document["tracks"]}
    tm_track = min(document["tracks"], key=lambda t: abs(t["frequency_hz"][0] - f_tm110))
    te_track = min(document["tracks"], key=lambda t: abs(t["frequency_hz"][0] - f_te103[0]))
    assert tm_track is not te_track and by_start
    np.testing.assert_allclose(tm_track["frequency_hz"], f_tm110, rtol=3e-3)
    np.testing.assert_allclose(te_track["frequency_hz"], f_te103, rtol=3e-3)


def test_every_point_matches_the_box_formula(box_sweep):
    document, _, _ = box_sweep
    for point in document["points"]:
        d = point["values"][0]
        exact = [f for f, _ in labelled(d)][:9]
        solved = [m["frequency_hz"] for m in point["modes"]][:9]
        np.testing.assert_allclose(solved, exact, rtol=3e-3)


def test_outputs_and_resume(box_sweep, capsys):
    document, out, case = box_sweep
    for name in ("sweep.json", "sweep.csv", "mode_chart.png"):
        assert (out / name).stat().st_size > 0
    header = (out / "sweep.csv").read_text().splitlines()[0]
    assert header.startswith("geometry.length (m),track1_frequency_hz")
    # Run again: every point is taken from the folder, nothing is solved, same tracks.
    stamps = {p: p.stat().st_mtime_ns for p in (out / "points").glob("*.json")}
    assert main(["sweep", str(case), "--out", str(out), "-q"]) == 0
    assert {p: p.stat().st_mtime_ns for p in (out / "points").glob("*.json")} == stamps
    again = json.loads((out / "sweep.json").read_text())
    assert again["tracks"] == document["tracks"]
    assert "4 points" in capsys.readouterr().out


def test_interrupted_sweep_solves_only_what_is_missing(box_sweep, tmp_path):
    document, out, case = box_sweep
    import shutil
    shutil.copytree(out / "points", tmp_path / "points")
    (tmp_path / "points" / "002.json").unlink()     # as if stopped during point 3
    again, _ = run_sweep(case, out=tmp_path)
    assert again["tracks"] == document["tracks"] or all(
        np.allclose([f or 0 for f in a["frequency_hz"]], [f or 0 for f in b["frequency_hz"]],
                    rtol=1e-9) for a, b in zip(again["tracks"], document["tracks"]))


SLAB_SWEEP = f"""
title = "Made-up slab-loaded WR-90 cavity, slab thickness sweep"
[geometry]
builder = "loaded_box"
width = "{A * 1e3} mm"
height = "{B * 1e3} mm"
length = "30 mm"
block_corner = ["0 mm", "0 mm", "0 mm"]
block_size = ["4 mm", "{B * 1e3} mm", "30 mm"]
[regions.block]
eps_r = 4.0
[mesh]
size = "2.5 mm"
[solve]
modes = 2
order = 2
[sweep]
parameter = "geometry.block_size[0]"
from = "3 mm"
to = "9 mm"
points = 4
"""


def test_slab_thickness_sweep_against_the_slab_loaded_formula(tmp_path):
    # TE10p of a guide half filled across x (the transverse resonance of Pozar §3.3 / our
    # femcav.analytic.slab, solved with brentq) at every slab thickness. Measured at this
    # 2.5 mm mesh: within 5.7e-5 (1.8 mm: 3.7e-5, in three times the time).
    case = tmp_path / "slab.toml"
    case.write_text(SLAB_SWEEP)
    document, _ = run_sweep(case, out=tmp_path / "out", jobs=2)   # in two processes
    first = document["tracks"][0]
    for t, f in zip(document["parameters"][0]["values"], first["frequency_hz"]):
        exact = slab_te_m0p_frequencies(A, t, 0.030, 4.0, 1, 1)[0]
        assert f == pytest.approx(exact, rel=2e-3)


@pytest.mark.parametrize("sweep, message", [
    ('parameter = "geometry.colour"\nvalues = [1]', "this builder takes"),
    ('parameter = "solve.modes"\nvalues = [1, 2]', "cannot vary"),
    ('parameter = "geometry.length"\nfrom = "1 mm"\nto = "2 mm"', "missing points"),
    ('parameter = "geometry.length"\nvalues = ["1 mm", "1 mm"]', "twice"),
    ('parameter = "regions.inside.eps_r"\nvalues = ["2 mm"]', "must be a number"),
])
def test_bad_sweep_tables(tmp_path, sweep, message):
    case = tmp_path / "bad.toml"
    case.write_text(BOX_SWEEP.split("[sweep]")[0] + "[sweep]\n" + sweep + "\n")
    with pytest.raises(InputError, match=message):
        run_sweep(case, out=tmp_path / "out")
