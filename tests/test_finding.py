"""Finding things in the results and in one's own mistakes: mode labels in every table,
the second tables, human words in the report, metal and wall-kind spellings, names checked
before meshing, and the warning for bare numbers that make an unlikely part."""

from __future__ import annotations

import csv
import json

import pytest

from femcav.case import load_case
from femcav.cli import main
from femcav.io.second_tables import as_text
from femcav.metals import CONDUCTIVITY_S_PER_M
from femcav.viz.report import write_report

BOX = """
title = "small box"
[geometry]
builder = "box"
width = {width}
height = {height}
length = {length}
[mesh]
size = "4 mm"
[solve]
modes = 2
"""
BOX_MM = BOX.format(width='"20 mm"', height='"10 mm"', length='"25 mm"')


def _case(tmp_path, text, name="case.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


# --- bare numbers ------------------------------------------------------------------------

def test_bare_numbers_that_make_a_huge_part_are_warned_about_naming_the_unit(tmp_path):
    # WR-90 inner sizes 22.86 x 10.16 mm (common practice), written without the unit
    case = load_case(_case(tmp_path, BOX.format(width=22.86, height=10.16, length=30)))
    warnings = case.geometry.warnings
    assert len(warnings) == 3
    assert ('geometry.width = 22.86 is read as 22.86 m' in warnings[0]
            and 'write "22.86 mm" if millimetres were meant' in warnings[0])


def test_lengths_with_units_or_plausible_bare_numbers_get_no_warning(tmp_path):
    assert load_case(_case(tmp_path, BOX_MM)).geometry.warnings == ()
    bare_si = BOX.format(width=0.02286, height=0.01016, length=0.03)
    assert load_case(_case(tmp_path, bare_si, "si.toml")).geometry.warnings == ()


def test_the_warning_reaches_stderr_even_when_quiet(tmp_path, capsys, monkeypatch):
    import gmsh

    def no_meshing(*args, **kwargs):
        raise RuntimeError("meshing is not part of this test")

    monkeypatch.setattr(gmsh, "initialize", no_meshing)
    case = _case(tmp_path, BOX.format(width=22.86, height=10.16, length=30))
    try:        # the 30 m box is refused by the element budget, or meshing is stopped
        main(["mesh", str(case), "-q", "--out", str(tmp_path / "out")])
    except RuntimeError:
        pass
    err = capsys.readouterr().err
    assert "femcav: warning: geometry.width = 22.86 is read as 22.86 m" in err


# --- names checked before meshing ---------------------------------------------------------

@pytest.mark.parametrize("extra, expected", [
    ('[walls.lid]\nkind = "pmc"\n', "walls.lid: this box has no wall 'lid'"),
    ("[regions.puck]\neps_r = 9.8\n", "regions.puck: this box has no region 'puck'"),
])
def test_a_wrong_name_is_refused_before_any_mesh_is_made(tmp_path, capsys, monkeypatch,
                                                         extra, expected):
    import gmsh

    started = []
    monkeypatch.setattr(gmsh, "initialize", lambda *a, **k: started.append(1))
    out = tmp_path / "out"
    assert main(["solve", str(_case(tmp_path, BOX_MM + extra)), "-q", "--out", str(out)]) == 2
    assert expected in capsys.readouterr().err
    assert started == [] and not out.exists()


def test_a_composite_knows_the_wall_names_of_its_solids(tmp_path):
    text = """
[geometry]
builder = "composite"
[[geometry.solids]]
shape = "box"
role = "space"
name = "housing"
corner = ["0 mm", "0 mm", "0 mm"]
size = ["20 mm", "20 mm", "20 mm"]
[[geometry.solids]]
shape = "cylinder"
role = "metal"
name = "rod"
base = ["10 mm", "10 mm", "0 mm"]
axis = ["0 mm", "0 mm", "10 mm"]
radius = "2 mm"
[walls.housing]
kind = "pec"
[walls.rod]
kind = "pmc"
"""
    assert set(load_case(_case(tmp_path, text)).walls) == {"housing", "rod"}
    from femcav.errors import InputError
    with pytest.raises(InputError, match="walls.stub: this composite has no wall 'stub'"):
        load_case(_case(tmp_path, text + '[walls.stub]\nkind = "pec"\n', "bad.toml"))


# --- spellings ----------------------------------------------------------------------------

def test_metal_names_and_wall_kinds_in_any_letter_case_and_common_spellings(tmp_path):
    walls = ('[walls.x_min]\nkind = "Metal"\nmetal = "aluminum"\n'
             '[walls.x_max]\nkind = "metal"\nmetal = "Copper"\n'
             '[walls.y_min]\nkind = "PEC"\n[walls.y_max]\nkind = "PMC"\n'
             '[walls.z_min]\nkind = "METAL"\nmetal = "Cu"\n')
    case = load_case(_case(tmp_path, BOX_MM + walls + '[symmetry]\nx = "PMC"\n'))
    w = case.walls
    # aluminium 38.16 MS/m, copper 58.13 MS/m (Pozar, Microwave Engineering, 4th ed.,
    # Appendix F; from memory, as femcav.metals cites)
    assert w["x_min"].conductivity == pytest.approx(3.816e7)
    assert w["x_max"].conductivity == CONDUCTIVITY_S_PER_M["copper"] == w["z_min"].conductivity
    assert (w["y_min"].kind, w["y_max"].kind) == ("pec", "pmc")
    assert case.symmetry == {"x": ("pmc",)}


def test_an_unknown_metal_is_still_refused(tmp_path):
    from femcav.errors import InputError
    with pytest.raises(InputError, match="walls.x_min.metal: must be one of"):
        load_case(_case(tmp_path, BOX_MM + '[walls.x_min]\nkind = "metal"\nmetal = "tin"\n'))


# --- labels and second tables -------------------------------------------------------------

def test_mode_labels_in_the_table_and_the_csv(tmp_path):
    from femcav import run_case

    _, result, folder = run_case(_case(tmp_path, BOX_MM), out=tmp_path / "r")
    # lowest mode of a 20 x 10 x 25 mm box: the (m, n, l) with the smallest
    # (m/a)² + (n/b)² + (l/d)², TE if n = 0 can hold it (Pozar §6.3, eq. 6.46)
    a, b, d = 20, 10, 25
    triples = [(m, n, l) for m in range(3) for n in range(3) for l in range(1, 3)
               if (m > 0) + (n > 0) >= 1]
    m, n, l = min(triples, key=lambda t: (t[0] / a) ** 2 + (t[1] / b) ** 2 + (t[2] / d) ** 2)
    expected = f"TE{m}{n}{l}"
    rows = list(csv.DictReader((folder / "modes.csv").open()))
    assert rows[0]["label"] == expected
    table = (folder / "table.txt").read_text(encoding="utf-8").splitlines()
    assert "label" in table[0] and expected in table[1]
    document = json.loads((folder / "modes.json").read_text(encoding="utf-8"))
    assert document["modes"][0]["label"] == expected


ROWS = [
    {"index": 1, "frequency_hz": 9e9,
     "tolerance": {"tolerance_m": {"radius": 2e-5}, "delta_f_hz": {"radius": 1.47e7},
                   "worst_case_hz": 1.47e7, "rss_hz": 1.47e7, "df_dp_hz_per_m": {}},
     "sensitivity_hz": {"eps_r": {"air": -4.0e8, "puck": -2.0e8}, "mu_r": {"air": -1e8}},
     "filling_factor": {"air": 0.25, "puck": 0.75},
     "magnetic_filling_factor": {"air": 0.6, "puck": 0.4}},
]


def test_second_tables_carry_tolerances_sensitivities_and_filling():
    text = as_text(ROWS)
    assert "frequency spread from [tolerances]" in text and "14.7 MHz" in text
    assert "df/deps_r puck" in text and "-200 MHz" in text
    assert "electric puck" in text and "0.7500" in text
    # a one-region part without studies has none
    assert as_text([{"index": 1, "filling_factor": {"inside": 1.0},
                     "magnetic_filling_factor": {"inside": 1.0}}]) == ""


def test_the_report_says_timings_in_words_and_shows_the_second_tables(tmp_path):
    document = {"title": "t", "modes": [{**ROWS[0], "residual": 1e-12, "divergence": 1e-16,
                                         "orthogonality": 1e-16, "passed": True,
                                         "label": "TM010"}],
                "timings_s": {"assembly_s": 0.5, "eigen_s": 1.0, "complex_check_s": 0.1}}
    page = tmp_path / "report.html"
    write_report(document, {}, page)
    html = page.read_text(encoding="utf-8")
    assert "assembly_s" not in html and "eigen_s" not in html
    assert "eigen solve 1.00 s" in html
    assert "Frequency spread from [tolerances]" in html and "TM010" in html


def test_a_bare_number_too_small_for_a_part_is_refused_naming_the_unit(tmp_path):
    from femcav.errors import InputError

    # 0.5 µm written as a bare 5e-7: below the 1 µm femcav takes for a dimension
    text = BOX.format(width=5e-7, height='"10 mm"', length='"25 mm"')
    with pytest.raises(InputError, match=r"geometry.width: .*the bare number 5e-07 is read "
                                         r"as 5e-07 m"):
        load_case(_case(tmp_path, text))


def test_table_frequencies_carry_the_digits_their_bars_earn():
    # A frequency printed to more digits than its error bar supports claims an accuracy it
    # does not have (issue 26): the table stops at the bar's second significant digit.
    from femcav.io.results import TABLE_DIGITS, frequency_digits
    from femcav.units import format_frequency

    def shown(f, bar):
        return format_frequency(f, frequency_digits(f, bar))

    assert shown(7.68695275e9, 268e6) == format_frequency(7.69e9, 3)      # ± 268 MHz
    assert shown(11.4743474e9, 156e3) == format_frequency(11.47435e9, 7)  # ± 156 kHz
    assert shown(9.5e9, 1.0) == format_frequency(9.5e9, 11)
    assert frequency_digits(9.5e9, None) == TABLE_DIGITS
