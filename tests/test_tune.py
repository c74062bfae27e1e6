"""Tuning a pillbox's radius onto a target: against the Bessel-zero formula inverted."""

from __future__ import annotations

import json
import math

import pytest
from scipy.constants import c
from scipy.special import jn_zeros

from femcav.cli import main
from femcav.errors import InputError
from femcav.study.tune import run_tune

CASE = """
title = "Made-up wavemeter, tuned onto 11 GHz"
[geometry]
builder = "pillbox"
radius = "10 mm"
length = "15 mm"
[mesh]
size = "2.5 mm"
curved = true
[solve]
modes = 3
order = 2
[tune]
parameter = "geometry.radius"
bracket = ["9.5 mm", "11 mm"]
target = "11 GHz"
mode = 1
"""


def test_tuned_radius_inverts_the_tm010_formula(tmp_path, capsys):
    # TM010: f = p01 c / (2π a), so a = p01 c / (2π f) (Pozar, Microwave Engineering, 4th ed.,
    # §6.4, from memory). Since f ∝ 1/a, the radius is as accurate as the frequency: within
    # the final error bar (plus the root finder's tolerance), give or take the bar's own
    # uncertainty: each run re-meshes at values that depend on round-off in the threaded
    # solves, and the bars held 299 of 300 true errors in their calibration (README, "Error
    # bars"); a run here gave a bar of 2.7e-5 for an error of 3.1e-5. So: twice the bar.
    case = tmp_path / "tune.toml"
    case.write_text(CASE)
    assert main(["tune", str(case), "--out", str(tmp_path / "out"), "-q"]) == 0
    document = json.loads((tmp_path / "out" / "tune.json").read_text())
    exact = jn_zeros(0, 1)[0] * c / (2 * math.pi * 11e9)
    allowed = 2 * document["error_estimate_hz"] / 11e9 + 1e-6
    assert abs(document["value"] / exact - 1) <= allowed
    assert abs(document["value"] / exact - 1) < 2e-4
    assert document["frequency_hz"] == pytest.approx(11e9, rel=allowed)
    assert document["iterations"] >= 1
    assert "puts mode 1 at" in capsys.readouterr().out


def test_target_outside_the_bracket_is_refused(tmp_path):
    case = tmp_path / "tune.toml"
    # (a coarser mesh than CASE's: 30 GHz is far outside what either end gives)
    case.write_text(CASE.replace('target = "11 GHz"', 'target = "30 GHz"')
                    .replace('size = "2.5 mm"', 'size = "4 mm"'))
    with pytest.raises(InputError, match="not between them"):
        run_tune(case, out=tmp_path / "out")


@pytest.mark.parametrize("change, message", [
    (('bracket = ["9.5 mm", "11 mm"]', 'bracket = ["9.5 mm"]'), "list of two values"),
    (('mode = 1', 'mode = 0'), "tune.mode: must be a whole number from 1"),
    (('target = "11 GHz"', 'target = "11 mm"'), "target"),
])
def test_bad_tune_tables(tmp_path, change, message):
    case = tmp_path / "tune.toml"
    case.write_text(CASE.replace(*change))
    with pytest.raises(InputError, match=message):
        run_tune(case, out=tmp_path / "out")


def test_each_value_is_solved_once(tmp_path, monkeypatch):
    # Brent's method (scipy's brentq) evaluates the two bracket ends first; run_tune has
    # already solved them to check that the target lies between them. A solve per value is
    # enough: the same value gives the same mesh and the same frequency (issue 25).
    from femcav.study import tune

    solved = []
    original = tune._Evaluations.solve

    def counting(self, value):
        solved.append(value)
        return original(self, value)

    monkeypatch.setattr(tune._Evaluations, "solve", counting)
    case = tmp_path / "tune.toml"
    case.write_text(CASE.replace('size = "2.5 mm"', 'size = "4 mm"')
                    .replace("mode = 1", "mode = 1\ntolerance = 1e-3"))
    document, _ = run_tune(case, out=tmp_path / "out")
    assert len(solved) == len(set(solved))
    # the reference point, both ends and every root-finder step, nothing else
    assert len(solved) == 3 + document["iterations"]


def test_root_finder_stops_at_the_tolerance_not_in_the_mesh_noise():
    # Every tune step is a new mesh, so f(value) carries noise (here 1e-4 of f, as a coarse
    # mesh gives). A straight line f = f0 (1 - v / 0.1 m) crossing the target at 5 mm has
    # its root known in closed form; the finder must stop once the value is pinned to what
    # moves f by the tolerance (1e-7 here, well below the noise, so that no step lands
    # within it by chance), not run on towards xtol = 1e-12 chasing noise.
    import numpy as np

    from femcav.study.tune import TuneSpec, _root

    rng = np.random.default_rng(7)
    f0, target = 10e9, 9.5e9

    class Runs:
        calls = 0

        def frequency(self, v):
            Runs.calls += 1
            return f0 * (1 - v / 0.1) * (1 + 1e-4 * rng.standard_normal())

    spec = TuneSpec(path="geometry.x", kind="length", bracket=(0.0, 0.01), target_hz=target,
                    mode=1, tolerance=1e-7)
    value = _root(Runs(), spec)
    # the noise moves the root by about 1e-4 / (1 - 0.05) of 0.1 m: 10 µm
    assert abs(value - 0.005) < 5e-5
    assert Runs.calls <= 16, Runs.calls     # 13 with the stop rule, 21 without it (seed 7)
