"""Q factors outside the perturbation formulas' validity are flagged per mode, in both
solver paths, and the complex check pairs each complex eigenvalue with one mode at most."""

import json
import math
from dataclasses import dataclass

import numpy as np
import pytest
from scipy.constants import c as C0
from scipy.constants import mu_0

from conftest import box_case
from femcav.cli import main
from femcav.eigen.complex_shift_invert import with_complex_frequencies

BOX = box_case("4 mm", 2, dims=("22.86 mm", "10.16 mm", "30 mm"))

PILLBOX_SECTION = """
[geometry]
builder = "pillbox"
radius = "12 mm"
length = "18 mm"
[solve]
modes = 2
azimuthal_orders = [0]
order = 2
"""


def solve(tmp_path, text, *options):
    case = tmp_path / "case.toml"
    case.write_text(text)
    out = tmp_path / "out"
    code = main(["solve", str(case), "--out", str(out), "-q", "--no-report", *options])
    return code, json.loads((out / "modes.json").read_text())["modes"]


@pytest.mark.parametrize("case", [BOX, PILLBOX_SECTION], ids=["3D", "axisymmetric"])
def test_a_poor_conductor_is_flagged(tmp_path, capsys, case):
    wall = "x_min" if case is BOX else "side"
    code, rows = solve(tmp_path, case + f'[walls.{wall}]\nkind = "metal"\n'
                                        'conductivity = "1 S/m"\n')
    assert code == 0       # the frequencies stand; the Q factors are what is flagged
    for row in rows:
        # skin depth δ = sqrt(2 / (ω μ0 σ)) (Pozar, Microwave Engineering, 4th ed., §1.7):
        # millimetres at 1 S/m (the least conductivity a case may give), against a part
        # of 10-30 mm
        delta = math.sqrt(2 / (2 * math.pi * row["frequency_hz"] * mu_0 * 1.0))
        assert delta > 1e-3
        text = " ".join(row["loss_warnings"])
        assert f"wall {wall}: skin depth {delta * 1e3:.3g} mm not small" in text
        assert "Q_wall" in text and row["q_wall"] < 100
    err = capsys.readouterr().err
    assert "mode 1: wall" in err and "need a good conductor" in err


def test_a_good_conductor_is_not_flagged(tmp_path, capsys):
    code, rows = solve(tmp_path, BOX + '[walls.x_min]\nkind = "metal"\nmetal = "copper"\n')
    assert code == 0
    assert all(row["loss_warnings"] == [] and row["q_wall"] > 1000 for row in rows)
    assert "perturbation" not in capsys.readouterr().err


def test_a_very_lossy_dielectric_is_flagged_and_pairs_one_to_one(tmp_path, capsys):
    code, rows = solve(tmp_path, BOX.replace("modes = 2", "modes = 3\ncomplex_check = true")
                       + "[regions.inside]\neps_r = 2.0\ntan_delta = 10\n")
    assert code == 0
    # 1/Q_d = tan δ for a filled cavity (Pozar §6.1, common practice): 0.1
    assert all(row["q_dielectric"] == pytest.approx(0.1) for row in rows)
    assert all(any("Q_dielectric = 0.1 < 10" in w for w in row["loss_warnings"])
               for row in rows)
    paired = [tuple(row["complex_frequency_hz"]) for row in rows]
    assert len(set(paired)) == len(paired)        # never one eigenvalue for two modes
    assert "complex_check = true solves" in capsys.readouterr().err


@dataclass(frozen=True)
class _Mode:
    frequency_hz: float
    complex_frequency_hz: float | None = None
    q_dielectric_complex: float | None = None


def _k0_squared(f_hz: complex) -> complex:
    return (2 * math.pi * f_hz / C0) ** 2


def test_pairing_is_one_to_one_and_leaves_the_rest_unpaired():
    modes = [_Mode(10.0e9), _Mode(10.1e9)]
    # one complex eigenvalue between the two real modes and one far away: nearest-frequency
    # pairing would give both modes the first
    values = np.array([_k0_squared(10.05e9 + 1e6j), _k0_squared(20e9 + 1e6j)])
    paired = with_complex_frequencies(modes, values)
    assert paired[0].complex_frequency_hz != paired[1].complex_frequency_hz
    # Q = Re ω / (2 Im ω) of the one each got
    got = sorted(m.q_dielectric_complex for m in paired)
    assert got == pytest.approx(sorted([10.05e9 / 2e6, 20e9 / 2e6]))
    # fewer eigenvalues than modes: one mode stays without a partner
    alone = with_complex_frequencies(modes, values[:1])
    assert sorted(m.complex_frequency_hz is None for m in alone) == [False, True]
