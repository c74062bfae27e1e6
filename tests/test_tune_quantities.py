"""tune on a coupling coefficient or an external Q (issue 20, item 5).

The tuned k is checked against a fresh, independent solve of the case at the value tune
returns (the coefficient's own formula, k = (f_j² − f_i²)/(f_j² + f_i²), is checked against
the symmetric solves and the small-aperture estimate in tests/test_coupling.py), and k must
grow with the iris (common practice: a wider aperture couples more; Collin, Foundations for
Microwave Engineering, 2nd ed., ch. 7, from memory).
"""

import json

import pytest

from femcav.case import case_from_data, read_case_data
from femcav.case_parameters import with_value
from femcav.case_studies import parse_tune
from femcav.cli import main
from femcav.errors import InputError
from femcav.runner import solve_case

PAIR = """
title = "Larkspur test: iris-coupled pair, k tuned by the iris width"
[geometry]
builder = "iris_pair"
width = "22.86 mm"
height = "10.16 mm"
length = "20 mm"
iris_width = "8 mm"
wall_thickness = "2 mm"
[mesh]
size = "4 mm"
[solve]
modes = 2
order = 1
[coupling]
modes = [1, 2]
[tune]
parameter = "geometry.iris_width"
bracket = ["6 mm", "12 mm"]
quantity = "coupling"
target = 0.03
tolerance = 1e-3
"""


def test_tune_an_iris_for_a_coupling_coefficient(tmp_path):
    case = tmp_path / "pair.toml"
    case.write_text(PAIR)
    out = tmp_path / "out"
    assert main(["tune", str(case), "--out", str(out), "-q"]) == 0
    document = json.loads((out / "tune.json").read_text())
    assert document["quantity"] == "coupling"
    assert document["reached"] == pytest.approx(0.03, rel=1e-3)
    ks = [e["coupling"] for e in sorted(document["evaluations"], key=lambda e: e["value"])]
    assert ks[0] < 0.03 < ks[-1]               # a wider iris couples more (bracket ends)
    # an independent solve at the width tune returned gives the same k
    data = with_value(read_case_data(case), "geometry.iris_width", document["value"])
    again = case_from_data({k: v for k, v in data.items() if k != "tune"}, case)
    result = solve_case(again, again.solve)
    assert result.coupling[0].k == pytest.approx(0.03, rel=2e-3)


@pytest.mark.parametrize("tune, message", [
    ('quantity = "coupling"\ntarget = 1.5', "between -1 and 1"),
    ('quantity = "coupling"\ntarget = "9 GHz"', "plain number"),
    ('quantity = "q_external"\ntarget = -3', "positive"),
    ('quantity = "q_external"\ntarget = 40', "name the port"),
    ('target = "9 GHz"\nport = "z_max"', "port is for"),
])
def test_tune_targets_are_checked(tune, message):
    data = {"walls": {}, "tune": {"parameter": "geometry.iris_width",
                                  "bracket": ["6 mm", "12 mm"]}}
    for line in tune.splitlines():
        key, _, value = line.partition(" = ")
        data["tune"][key] = json.loads(value)
    with pytest.raises(InputError, match=message):
        parse_tune(data)


def test_a_q_external_target_names_the_only_port_by_itself():
    data = {"walls": {"z_max": {"kind": "port"}},
            "tune": {"parameter": "geometry.length", "bracket": ["20 mm", "30 mm"],
                     "quantity": "q_external", "target": 40}}
    spec = parse_tune(data)
    assert (spec.port, spec.target, spec.target_hz) == ("z_max", 40.0, None)


def test_a_sweep_tracks_the_coupling_coefficient(tmp_path):
    """sweep.json's tracks carry coupling_k for the modes of the [coupling] pair; it grows
    with the iris (see above) and is k = (f_2² − f_1²)/(f_2² + f_1²) of the two tracked
    frequencies at every point."""
    case = tmp_path / "pair.toml"
    case.write_text(PAIR.split("[tune]")[0]
                    + '[sweep]\nparameter = "geometry.iris_width"\n'
                      'values = ["6 mm", "9 mm", "12 mm"]\n')
    out = tmp_path / "out"
    assert main(["sweep", str(case), "--out", str(out), "-q"]) == 0
    tracks = json.loads((out / "sweep.json").read_text())["tracks"]
    first, second = tracks[0], tracks[1]
    assert first["coupling_k"] == second["coupling_k"]       # one pair, both its modes
    k = first["coupling_k"]
    assert k[0] < k[1] < k[2]
    for f1, f2, value in zip(first["frequency_hz"], second["frequency_hz"], k):
        assert value == pytest.approx((f2**2 - f1**2) / (f2**2 + f1**2), rel=1e-9)
