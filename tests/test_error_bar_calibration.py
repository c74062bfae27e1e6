"""The error bars against known answers: coverage (share of true errors inside their bars)
and tightness (median bar / true error), on frequencies and wall Q, for a few cheap cases
of the calibration set (benchmarks/error_bar_calibration.py runs all of it).

References: the empty box's frequencies and TE10l wall Q, D. M. Pozar, Microwave
Engineering, 4th ed., §6.3 and eq. (6.46) (from memory; femcav/analytic/box.py, wall_q.py);
the pillbox's Bessel-zero frequencies and its TM010 and TE011 wall Q, Pozar §6.4 (from
memory; zeros from scipy.special); the shorted coaxial line's TEM resonances p c / 2L
(Pozar §6.2) and TE11 cutoff from the Bessel cross-product (Pozar §3.5, brentq), and its TEM
wall Q from the TEM fields (derived in the benchmark script, Pozar §6.1's method).
"""

import math
import sys
from pathlib import Path

import pytest

from femcav.bar_calibration import (
    FREQUENCY, BarSample, coverage, extrapolation_gain, samples, solve_text, tightness)
from femcav.post.q_bars import q_rate

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
from error_bar_calibration import CASES, coax_tem_q_wall  # noqa: E402

FAST = ("box_h1", "pillbox_section_h2", "coax_section_h2")


@pytest.fixture(scope="module")
def fast_results(tmp_path_factory):
    out = {}
    for name in FAST:
        folder = tmp_path_factory.mktemp(name)
        text, references = CASES[name]()
        out[name] = (solve_text(text, folder), references(folder))
    return out


@pytest.fixture(scope="module")
def fast_samples(fast_results):
    return [s for name, (result, refs) in fast_results.items()
            for s in samples(name, result, refs)]


def test_modes_json_carries_a_bar_and_an_extrapolation_beside_each_q(fast_results):
    from femcav.io.results import mode_rows
    rows = mode_rows(fast_results["box_h1"][0])
    assert all(r["q_wall_error"] > 0 and r["q_total_error"] > 0 for r in rows)
    assert abs(rows[0]["q_wall_extrapolated"] / rows[0]["q_wall"] - 1) < 0.05   # TE101
    assert all("q_dielectric_error" not in r for r in rows)     # no dielectric loss here


def test_the_fast_set_has_frequencies_and_wall_q_with_bars(fast_samples):
    kinds = {s.quantity for s in fast_samples}
    assert kinds == {FREQUENCY, "q_wall"}
    assert all(s.bar is not None and s.bar > 0 for s in fast_samples)
    assert len(fast_samples) >= 20


def test_coverage_of_the_bars_on_the_fast_set(fast_samples):
    # the target of issue 26: at least 95 % of the true errors inside their bars
    for quantity in (FREQUENCY, "q_wall"):
        chosen = [s for s in fast_samples if s.quantity == quantity]
        assert coverage(chosen) >= 0.95, quantity


def test_tightness_of_the_bars_on_the_fast_set(fast_samples):
    # frequencies: median bar / true error under 10 (measured 6.3 on these three cases,
    # against the target of 5: not met); the Q bars are looser (measured 12.9; the
    # coax's Q errors sit at 1e-7): their bound says they stay within an order of magnitude
    # of that, not that they meet the target
    freq = [s for s in fast_samples if s.quantity == FREQUENCY]
    assert 1.0 < tightness(freq) < 10.0
    q = [s for s in fast_samples if s.quantity == "q_wall"]
    assert 1.0 < tightness(q) < 100.0


def test_coverage_and_tightness_count_as_defined():
    def sample(bar, error):
        return BarSample("c", 1, FREQUENCY, 100.0 + error, 100.0, bar, None)
    chosen = [sample(2.0, 1.0), sample(1.0, 4.0), sample(6.0, 2.0), sample(None, 1.0)]
    assert coverage(chosen) == 0.5               # a missing bar holds nothing
    assert tightness(chosen) == pytest.approx(2.0)   # median of 2, 0.25, 3
    assert math.isnan(extrapolation_gain(chosen))


def test_tem_wall_q_of_a_long_line_tends_to_the_line_q():
    # without the end discs Q = ωμ0 ln(b/a) / (R_s (1/a + 1/b)) = β / 2α of the TEM line
    # (Pozar §2.7 and §6.1: α = R_s (1/a + 1/b) / (2 η ln(b/a)); from memory)
    outer, inner, length, sigma = 0.01, 0.003, 100.0, 58e6
    f = 3 * 299792458.0 / (2 * length)
    rs = math.sqrt(math.pi * f * 4e-7 * math.pi / sigma)
    line = 2 * math.pi * f * 4e-7 * math.pi * math.log(outer / inner) / (
        rs * (1 / inner + 1 / outer))
    assert coax_tem_q_wall(outer, inner, length, 3) == pytest.approx(line, rel=1e-3)


def test_wall_q_of_the_e_form_and_of_singular_parts_gets_half_the_rate():
    assert q_rate("q_wall", "H", 2.0) == 2.0
    assert q_rate("q_wall", "E", 2.0) == 1.0
    assert q_rate("q_dielectric", "E", 4.0) == 4.0
    assert q_rate("q_dielectric", "H", 4 / 3) == pytest.approx(2 / 3)


@pytest.mark.slow
def test_coverage_and_tightness_over_the_whole_calibration_set(tmp_path):
    # about 2 min: the twelve cases of benchmarks/error_bar_calibration.py. Measured on
    # 2026-12-03: frequencies 95.5 % inside, tightness 6.3; wall Q 92.1 %, 13.5; dielectric
    # Q 100 %, 70 (README, "Error bars"). The bounds hold those within a margin.
    found = []
    for name, make in CASES.items():
        folder = tmp_path / name
        folder.mkdir()
        text, references = make()
        found += samples(name, solve_text(text, folder), references(folder))
    freq = [s for s in found if s.quantity == FREQUENCY]
    q = [s for s in found if s.quantity != FREQUENCY]
    assert coverage(freq) >= 0.95 and tightness(freq) < 10
    assert coverage(q) >= 0.9 and tightness(q) < 100
