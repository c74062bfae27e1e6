"""`femcav verify`: the catalogue through the command line on a small subset, and a planted
wrong permittivity that must make the affected case fail (so the command can fail).

The references themselves are the catalogue's (femcav.verification.catalogue: closed forms
from femcav.analytic and scipy, each with its source); CI runs the whole catalogue with
`femcav verify --quick` (.ci/run)."""

from __future__ import annotations

import json
from dataclasses import replace

from femcav.cli import main
from femcav.verification.command import verify


def test_subset_through_the_command_line(tmp_path, capsys):
    out = tmp_path / "verify"
    assert main(["verify", "--quick", "--only", "pillbox,revolution", "--out", str(out),
                 "-q"]) == 0
    printed = capsys.readouterr().out
    assert "2 of 2 cases passed" in printed and " rel." in printed and " s " in printed
    document = json.loads((out / "verify.json").read_text())
    assert document["format"] == "femcav-verify" and document["passed"] is True
    assert document["environment"]["python"] and document["environment"]["libraries"]["scipy"]
    assert [c["name"] for c in document["cases"]] == ["pillbox", "revolution"]
    for case in document["cases"]:
        assert len(case["meshes"]) == 2 and case["meshes"][0]["dofs"] < case["meshes"][1]["dofs"]
        for q in case["quantities"]:
            assert q["passed"] and q["errors"][-1] <= q["tolerance"]
            assert q["errors"][-1] < q["errors"][0]          # the finer mesh is closer
    page = (out / "verify.html").read_text()
    assert page.count('src="data:image/png;base64,') == 2    # one convergence plot per case
    assert "http://" not in page and "https://" not in page  # offline


def wrong_disc_permittivity(case):
    """A planted solver-setting error: the disc's eps_r 5 % too high, everything else kept."""
    if "disc" not in case.regions:
        return case
    disc = case.regions["disc"]
    return replace(case, regions={**case.regions, "disc": replace(disc, eps_r=1.05 * disc.eps_r)})


def test_a_wrong_permittivity_fails_the_cases_it_touches(tmp_path, capsys):
    document, folder, status = verify(tmp_path / "verify", only=("revolution",
                                                                  "two_layer_cylinder"),
                                      adjust_case=wrong_disc_permittivity, quiet=True)
    assert status == 3
    by_name = {c["name"]: c for c in document["cases"]}
    assert by_name["revolution"]["passed"]            # no disc: untouched, still passes
    layered = by_name["two_layer_cylinder"]
    assert not layered["passed"]
    # a 5 % error in eps_r moves the disc-bound modes by percents, far above the tolerance,
    # and they stop converging towards the reference (the observed rate collapses)
    assert layered["quantities"][0]["errors"][-1] > 100 * layered["quantities"][0]["tolerance"]
    assert any("above the tolerance" in f for f in layered["failures"])
    assert json.loads((folder / "verify.json").read_text())["passed"] is False
    assert "FAILED two_layer_cylinder" in capsys.readouterr().out


def test_unknown_case_name_is_an_input_error(tmp_path, capsys):
    out = tmp_path / "verify"
    assert main(["verify", "--only", "box,no_such_case", "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "no_such_case" in err and len(err.strip().splitlines()) == 1
    assert not out.exists()


def test_comparison_error_and_coverage():
    from femcav.verification.reference_case import Comparison

    c = Comparison((101.0, 199.0), (100.0, 200.0), bars=(2.0, 0.5))
    assert abs(c.error - 0.01) < 1e-12                       # the larger of 1 % and 0.5 %
    assert c.coverage == 0.5                                 # 1 within 2, but 1 not within 0.5
    assert Comparison((100.0,), (100.0, 200.0)).error == float("inf")   # a value missing
    assert Comparison((100.0,), (100.0,)).coverage is None   # no bars computed
    assert Comparison((None,), (100.0,)).error == float("inf")  # a value not computed
    assert Comparison((100.0,), (100.0,), bars=(None,)).coverage == 0.0  # a mode without a bar


def test_observed_rate_in_h_from_dofs():
    from femcav.verification.run import observed_rate

    # error ∝ h^4 with h = DOFs^(-1/3): eight times the DOFs halves h, error / 16
    assert abs(observed_rate([1000, 8000], [1.6e-3, 1e-4], section=False) - 4) < 1e-12
    # on a section h = DOFs^(-1/2): four times the DOFs halves h
    assert abs(observed_rate([1000, 4000], [6.4e-3, 1e-4], section=True) - 6) < 1e-12
    assert observed_rate([1000], [1e-3], section=False) is None
    assert observed_rate([1000, 8000], [1e-3, 0.0], section=False) is None


def test_judge_fails_a_slow_rate_and_skips_it_at_the_floor():
    from femcav.verification.reference_case import Comparison, Quantity, ReferenceCase
    from femcav.verification.run import judge

    def case(tolerance, rate):
        return ReferenceCase(name="t", title="t", covers="t", source="t", order=2,
                             section=False, sizes={"quick": (2.0, 1.0)}, case_text=str,
                             compare=None, quantities=(Quantity("f", tolerance, rate),))

    def meshes(errors, bar=None):
        return [{"size_m": h, "dofs": n, "elements": 1, "time_s": 0.0, "error_bars": False,
                 "checks_passed": True, "resolved": True,
                 "comparisons": {"f": Comparison((1 + e,), (1.0,),
                                                 bars=None if bar is None else (bar,))}}
                for h, n, e in zip((2.0, 1.0), (1000, 8000), errors)]

    # halving h only halves the error: rate 1 against an expected 4
    slow = judge(case(1e-3, 4.0), "quick", meshes([2e-4, 1e-4]), None, 0.0)
    assert not slow["passed"] and "observed rate" in slow["failures"][0]
    # the same errors a thousand times smaller sit at the solver's floor: rate not judged
    floor = judge(case(1e-3, 4.0), "quick", meshes([2e-10, 1e-10]), None, 0.0)
    assert floor["passed"] and not floor["quantities"][0]["rate_judged"]
    # within the rate but above the tolerance
    loose = judge(case(1e-5, 4.0), "quick", meshes([1.6e-3, 1e-4]), None, 0.0)
    assert not loose["passed"] and "above the tolerance" in loose["failures"][0]
    # an error bar narrower than the true error
    narrow = judge(case(1e-3, 4.0), "quick", meshes([1.6e-3, 1e-4], bar=5e-5), None, 0.0)
    assert not narrow["passed"] and "error bars hold only 0%" in narrow["failures"][0]
    assert judge(case(1e-3, 4.0), "quick", meshes([1.6e-3, 1e-4], bar=2e-4), None,
                 0.0)["passed"]
    # a case that could not run has failed
    broken = judge(case(1e-3, 4.0), "quick", [], "RuntimeError: no", 0.0)
    assert not broken["passed"] and broken["failures"] == ["RuntimeError: no"]
