"""Permittivity extraction: synthesised measurements from full solves, extracted back."""

from __future__ import annotations

import json

import pytest

from femcav.case import case_from_data, read_case_data
from femcav.cli import main
from femcav.errors import InputError
from femcav.runner import solve_case
from femcav.study.extract import run_extract
from femcav.study.parameters import with_value

WALLS = "".join(f'[walls.{w}]\nkind = "metal"\nmetal = "copper"\n'
                for w in ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max"))
FIXTURE = f"""
title = "Made-up rod-sample fixture: a thin post across a WR-90 cavity, along E"
[geometry]
builder = "loaded_box"
width = "22.86 mm"
height = "10.16 mm"
length = "30 mm"
block_corner = ["10.93 mm", "0 mm", "14 mm"]
block_size = ["1 mm", "10.16 mm", "2 mm"]
[regions.block]
eps_r = 4.0
{WALLS}
[mesh]
size = "3 mm"
[solve]
modes = 1
"""


def measure(path, eps, tan_delta):
    data = with_value(with_value(read_case_data(path), "regions.block.eps_r", eps),
                      "regions.block.tan_delta", tan_delta)
    case = case_from_data(data, path)
    mode = solve_case(case, case.solve).modes[0]
    return mode.frequency_hz, mode.losses.q_total


@pytest.fixture(scope="module")
def extracted(tmp_path_factory):
    folder = tmp_path_factory.mktemp("extract")
    case = folder / "fixture.toml"
    case.write_text(FIXTURE)
    f0, q0 = measure(case, 1.0, 0.0)          # "measured" without the sample
    fs, qs = measure(case, 6.0, 2e-3)         # and with it
    case.write_text(FIXTURE + f"""
[extract]
sample = "block"
empty_frequency = {float(f0)!r}
empty_q = {float(q0)!r}
loaded_frequency = {float(fs)!r}
loaded_q = {float(qs)!r}
eps_bracket = [1.5, 12]
""")
    assert main(["extract", str(case), "--out", str(folder / "out"), "-q"]) == 0
    return json.loads((folder / "out" / "extract.json").read_text())


def test_full_model_returns_the_synthesised_material(extracted):
    assert extracted["eps_r"] == pytest.approx(6.0, rel=1e-4)
    assert extracted["tan_delta"] == pytest.approx(2e-3, rel=1e-4)
    assert extracted["frequency_factor"] == pytest.approx(1.0, rel=1e-9)
    assert extracted["wall_q_factor"] == pytest.approx(1.0, rel=1e-9)


def test_perturbation_formula_is_off_by_about_its_known_error(extracted):
    # The small-sample formula neglects the field change, an error of order (ε_r' - 1) F
    # in (ε_r' - 1) for a rod along E (no depolarisation); measured here 4.9 % with
    # (ε_r' - 1) F = 5.8 %.
    p = extracted["perturbation_estimate"]
    bound = 2 * (6.0 - 1) * p["field_share"]
    assert 0 < (p["eps_r"] - 6.0) / (6.0 - 1) < bound
    assert abs(p["tan_delta"] / 2e-3 - 1) < 2 * bound


def test_bad_extract_tables(tmp_path):
    case = tmp_path / "bad.toml"
    case.write_text(FIXTURE + '[extract]\nsample = "block"\nempty_frequency = "8 GHz"\n'
                    'empty_q = 5000\nloaded_frequency = "7.9 GHz"\nloaded_q = 6000\n')
    with pytest.raises(InputError, match="loaded_q must be"):
        run_extract(case)
