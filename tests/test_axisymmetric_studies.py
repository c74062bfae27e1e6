"""Sweeps and tuning of bodies of revolution: the studies of 3D cases, on the meridional
section, against the pillbox's closed forms.

TM_010 at c p01 / (2π a), independent of the length; TE_111 at
(c / 2π) sqrt((p'11 / a)² + (π / d)²); p01 and p'11 the first zeros of J0 and J1' from
scipy.special (D. M. Pozar, Microwave Engineering, 4th ed., §6.3; section number from
memory). The two cross where π / d = sqrt(p01² - p'11²) / a, at d = 2.03 a.
"""

from __future__ import annotations

import json
import math

import pytest
from scipy.constants import c
from scipy.special import jn_zeros, jnp_zeros

from femcav.cli import main

P01 = jn_zeros(0, 1)[0]
P11_PRIME = jnp_zeros(1, 1)[0]
RADIUS = 0.010

CASE = """
title = "pillbox on its section, {what}"
[geometry]
builder = "pillbox"
radius = "10 mm"
length = "15 mm"
[mesh]
size = "1.5 mm"
[solve]
modes = 2
order = 2
azimuthal_orders = [0, 1]
{study}
"""


def tm010(radius):
    return c * P01 / (2 * math.pi * radius)


def te111(radius, length):
    return c / (2 * math.pi) * math.hypot(P11_PRIME / radius, math.pi / length)


def run(tmp_path, command, what, study, order=2):
    case = tmp_path / f"{command}.toml"
    case.write_text(CASE.format(what=what, study=study).replace("order = 2", f"order = {order}"))
    out = tmp_path / "out"
    extra = ["--no-report"] if command == "solve" else []
    assert main([command, str(case), "--out", str(out), "--quiet", *extra]) == 0
    return out


def test_a_length_sweep_follows_tm010_and_te111_through_their_crossing(tmp_path):
    lengths = [0.016, 0.019, 0.022, 0.025]          # the crossing is at 20.3 mm
    out = run(tmp_path, "sweep", "length sweep", """
[sweep]
parameter = "geometry.length"
values = ["16 mm", "19 mm", "22 mm", "25 mm"]
""")
    tracks = json.loads((out / "sweep.json").read_text())["tracks"]
    assert len(tracks) == 2
    # below the crossing TM010 is the lowest mode: track 1 stays TM010, track 2 TE111
    want = {1: [tm010(RADIUS)] * 4, 2: [te111(RADIUS, d) for d in lengths]}
    for track in tracks:
        for got, expected in zip(track["frequency_hz"], want[track["track"]]):
            assert got == pytest.approx(expected, rel=2e-5)
    # above the crossing the order by frequency has swapped: the tracks did not
    first, second = (t["frequency_hz"] for t in tracks)
    assert first[0] < second[0] and first[-1] > second[-1]


def test_tuning_the_radius_puts_tm010_on_target(tmp_path):
    target = 11e9
    out = run(tmp_path, "tune", "radius tuning", """
[tune]
parameter = "geometry.radius"
bracket = ["9.5 mm", "12 mm"]
target = "11 GHz"
mode = 1
tolerance = 1e-6
""")
    document = json.loads((out / "tune.json").read_text())
    exact = c * P01 / (2 * math.pi * target)         # the closed form solved for a
    assert document["value"] == pytest.approx(exact, rel=2e-5)
    # the final solve with error bars lands on the target within its bar or the tolerance
    assert abs(document["frequency_hz"] - target) <= max(document["error_estimate_hz"],
                                                          1e-6 * target)
    assert document["error_estimate_hz"] < 1e-5 * target


def test_tolerances_on_a_section_give_the_bessel_derivatives(tmp_path):
    # f(TM010) = c p01 / (2π a) gives df/da = -f/a and df/dd = 0; TE111's
    # f = (c/2π) sqrt((p'11/a)² + (π/d)²) gives df/dd = -(c/2π)² (π/d)² / (d f)
    # (Pozar §6.3, derivatives of the closed forms). Order 3: each ± step is a section meshed
    # anew, and order 2's re-meshing noise (about 1e-6 of f) made 9e-4 of the derivative here.
    out = run(tmp_path, "solve", "tolerances", """
[tolerances]
radius = "20 um"
length = "30 um"
""", order=3)
    modes = json.loads((out / "modes.json").read_text())["modes"]
    d = 0.015
    tm, te = modes[0], modes[1]
    assert tm["tolerance"]["df_dp_hz_per_m"]["radius"] == pytest.approx(
        -tm010(RADIUS) / RADIUS, rel=1e-4)
    assert abs(tm["tolerance"]["df_dp_hz_per_m"]["length"]) < 1e-5 * tm010(RADIUS) / d
    f = te111(RADIUS, d)
    assert te["tolerance"]["df_dp_hz_per_m"]["length"] == pytest.approx(
        -(c / (2 * math.pi)) ** 2 * (math.pi / d) ** 2 / (d * f), rel=1e-4)
    assert te["tolerance"]["rss_hz"] == pytest.approx(math.hypot(
        te["tolerance"]["delta_f_hz"]["radius"], te["tolerance"]["delta_f_hz"]["length"]))
