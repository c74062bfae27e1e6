"""The single-pole response of a resonance through its ports (post.response), checked
against the definitions of critical coupling and loaded bandwidth computed here."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from femcav.post.response import (Resonance, coupling_factors, group_delay_s, loaded_q,
                                  neighbour_bandwidths, response_rows, s_parameter)

F0 = 9.5e9


def test_critical_coupling_reflects_nothing_at_resonance():
    # β = Q_0/Q_e = 1: the port is matched at resonance, S11 = (β − 1)/(β + 1) = 0
    # (Pozar, Microwave Engineering, 4th ed., §6.7).
    matched = Resonance(F0, 2000.0, {"in": 2000.0})
    assert abs(s_parameter(matched, "in", "in", np.array([F0]))[0]) < 1e-12
    assert coupling_factors(2000.0, {"in": 2000.0}) == {"in": 1.0}
    # Under- and over-coupled: |S11| = |β − 1|/(β + 1), the same for β and 1/β.
    under = abs(s_parameter(Resonance(F0, 2000.0, {"in": 4000.0}), "in", "in", [F0])[0])
    over = abs(s_parameter(Resonance(F0, 2000.0, {"in": 1000.0}), "in", "in", [F0])[0])
    assert under == pytest.approx(1 / 3) and over == pytest.approx(1 / 3)


def _half_power_width(power, f0, span):
    peak = power(f0)
    lower = brentq(lambda f: power(f) - peak / 2, f0 - span, f0)
    upper = brentq(lambda f: power(f) - peak / 2, f0, f0 + span)
    return upper - lower


def test_loaded_bandwidth_is_f_over_loaded_q():
    q0, qe1, qe2 = 3000.0, 1200.0, 1800.0
    resonance = Resonance(F0, q0, {"in": qe1, "out": qe2})
    q_l = 1 / (1 / q0 + 1 / qe1 + 1 / qe2)      # Pozar, §6.7
    assert resonance.q_loaded == pytest.approx(q_l)
    span = 5 * F0 / q_l
    through = _half_power_width(
        lambda f: abs(s_parameter(resonance, "out", "in", [f])[0]) ** 2, F0, span)
    assert through == pytest.approx(F0 / q_l, rel=1e-9)
    # a one-port: the power it absorbs, 1 − |S11|², has the same loaded width
    one_port = Resonance(F0, q0, {"in": qe1})
    absorbed = _half_power_width(
        lambda f: 1 - abs(s_parameter(one_port, "in", "in", [f])[0]) ** 2, F0, span)
    assert absorbed == pytest.approx(F0 / loaded_q(q0, {"in": qe1}), rel=1e-9)


def test_group_delay_is_the_phase_slope():
    resonance = Resonance(F0, 2500.0, {"in": 900.0, "out": 1500.0})
    f = np.linspace(F0 * (1 - 2e-3), F0 * (1 + 2e-3), 4001)
    for to_port, from_port in (("in", "in"), ("out", "in")):
        phase = np.unwrap(np.angle(s_parameter(resonance, to_port, from_port, f)))
        numeric = -np.gradient(phase, 2 * math.pi * f)
        exact = group_delay_s(resonance, to_port, from_port, f)
        assert np.max(np.abs(numeric - exact)[1:-1]) < 1e-3 * np.max(np.abs(exact))


def test_rows_cover_every_port_pair_over_the_band():
    resonance = Resonance(F0, None, {"a": 1000.0, "b": 1000.0})
    rows = response_rows(3, resonance)
    assert {(r.to_port, r.from_port) for r in rows} == {("a", "a"), ("a", "b"), ("b", "a"),
                                                         ("b", "b")}
    # lossless, two equal ports: full transmission at resonance (0 dB)
    peak = max(r.magnitude_db for r in rows if r.to_port == "b" and r.from_port == "a")
    assert peak == pytest.approx(0.0, abs=1e-9)
    assert neighbour_bandwidths(F0, 1000.0, [F0, F0 * 1.01]) == pytest.approx(10.0)


def test_the_report_shows_the_ports_table_and_draws_the_response(tmp_path):
    from femcav.viz.port_response import has_response, port_section, write_response_plot

    row = {"index": 1, "frequency_hz": F0, "q_total": 2000.0, "q_loaded": 500.0,
           "q_external": {"in": 1000.0, "out": 2000.0},
           "coupling_factor": {"in": 2.0, "out": 1.0}}
    document = {"modes": [row, {"index": 2, "frequency_hz": 2 * F0}]}
    assert has_response(document) and not has_response({"modes": [document["modes"][1]]})
    html = port_section(document, "")
    assert "Q_ext in" in html and "β out" in html and "1000" in html
    write_response_plot(document, tmp_path / "response.png")
    assert (tmp_path / "response.png").read_bytes()[:4] == b"\x89PNG"
