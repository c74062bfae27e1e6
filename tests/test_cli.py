"""The command line end to end: result files, their documented format, and the promise that a
mistake gets one clear message, exit status 2 and no output."""

import json
import math
import subprocess
import sys
from pathlib import Path

import meshio
import numpy as np
import pytest

from femcav.cli import main
from femcav.post import checks
from conftest import box_with_blocks

SMALL_BOX = """
title = "small box"
[geometry]
builder = "box"
width = "20 mm"
height = "10 mm"
length = "25 mm"

[mesh]
size = "3 mm"
[solve]
modes = 3
"""


def write_case(folder: Path, text: str, name: str = "case.toml") -> Path:
    path = folder / name
    path.write_text(text)
    return path


def test_solve_writes_documented_results(tmp_path, capsys):
    case = write_case(tmp_path, SMALL_BOX)
    out = tmp_path / "results"
    assert main(["solve", str(case), "--out", str(out), "--quiet"]) == 0
    printed = capsys.readouterr().out
    assert "GHz" in printed and "ok" in printed

    document = json.loads((out / "modes.json").read_text())
    assert isinstance(document["dofs"], int) and isinstance(document["elements"], int)
    assert document["factorization"] in ("MKL PARDISO", "SuperLU (MKL PARDISO not installed)")
    freqs = [m["frequency_hz"] for m in document["modes"]]
    assert len(freqs) == 3 and freqs == sorted(freqs)
    assert all(m["residual"] < 1e-8 and m["divergence"] < 1e-8 for m in document["modes"])
    # TE101 of a 20 x 10 x 25 mm box: (c/2) sqrt(1/a² + 1/d²) (Pozar §6.3), coarse mesh.
    assert freqs[0] == pytest.approx(299792458 / 2 * math.hypot(1 / 0.020, 1 / 0.025), rel=0.03)

    csv_lines = (out / "modes.csv").read_text().splitlines()
    assert csv_lines[0].split(",")[:2] == ["index", "frequency_hz"] and len(csv_lines) == 4

    grid = meshio.read(out / "fields.vtu")
    names = set(grid.cell_data)
    assert {"region", "m01_E", "m01_H", "m01_we", "m01_wm", "m03_E"} <= names
    # Fields are scaled to 1 J stored energy, half electric and half magnetic at resonance.
    p = grid.points[grid.cells_dict["tetra"]]
    vol = np.abs(np.einsum("ij,ij->i", np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]),
                           p[:, 3] - p[:, 0])) / 6
    for key in ("m01_we", "m01_wm"):
        assert np.sum(vol * grid.cell_data[key][0]) == pytest.approx(0.5, rel=0.05)
    assert not list(out.glob(".*partial*"))


def test_factorization_chosen_on_the_command_line(tmp_path, capsys):
    case = write_case(tmp_path, SMALL_BOX)
    out = tmp_path / "lu"
    assert main(["solve", str(case), "--out", str(out), "--factorization", "superlu", "-q",
                 "--no-report"]) == 0
    assert json.loads((out / "modes.json").read_text())["factorization"] == "SuperLU"


def test_default_output_folder_and_near_and_form(tmp_path, capsys):
    case = write_case(tmp_path, SMALL_BOX)
    assert main(["solve", str(case), "--near", "12 GHz", "--modes", "2", "--form", "H",
                 "-q", "--no-report"]) == 0
    document = json.loads((tmp_path / "case-results" / "modes.json").read_text())
    assert document["form"] == "H" and document["request"]["near_hz"] == 12e9
    assert len(document["modes"]) == 2


def test_failed_checks_are_loud(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(checks, "RESIDUAL_LIMIT", 0.0)
    case = write_case(tmp_path, SMALL_BOX)
    assert main(["solve", str(case), "-q", "--no-report"]) == 3
    captured = capsys.readouterr()
    assert "FAILED" in captured.out and "FAILED its checks" in captured.err
    document = json.loads((tmp_path / "case-results" / "modes.json").read_text())
    assert document["checks_passed"] is False


def test_help_lists_commands():
    run = subprocess.run([sys.executable, "-m", "femcav", "--help"], capture_output=True,
                         text=True, check=True)
    assert "solve" in run.stdout and "find the resonant modes" in run.stdout


def _slab_mesh(folder):
    return box_with_blocks(folder / "two_regions.msh", (0.02, 0.01, 0.025),
                           {"slab": (0, 0, 0, 0.005, 0.01, 0.025)}, mesh_size=0.004)


BAD_CASES = {
    "unknown key": (SMALL_BOX.replace("modes = 3", "modes = 3\ntolerance = 1"),
                    "solve.tolerance: unknown key"),
    "wrong unit": (SMALL_BOX.replace('"20 mm"', '"20 GHz"'),
                   "geometry.width: unknown length unit 'GHz'"),
    "unit missing": (SMALL_BOX.replace('"20 mm"', '"20"'), "geometry.width: '20' has no unit"),
    "region not in mesh": (SMALL_BOX + "[regions.puck]\neps_r = 9.8\n",
                           "regions.puck: this box has no region 'puck'"),
    "negative eps": (SMALL_BOX + "[regions.inside]\neps_r = -2.0\n",
                     "regions.inside.eps_r: must be a number from 0.01 to 100000"),
    "eps negative somewhere": (SMALL_BOX + '[regions.inside]\neps_r = "1 - 100*x"\n',
                               "regions.inside.eps_r: eps_r must be from 0.01 to 100000 "
                               "everywhere"),
    "expression does not parse": (SMALL_BOX + '[regions.inside]\neps_r = "2 +* x"\n',
                                  "regions.inside.eps_r: cannot parse expression"),
    "code in expression": (SMALL_BOX + '[regions.inside]\neps_r = "__import__(\'os\')"\n',
                           "regions.inside.eps_r: this function call is not allowed"),
    "wall kind": (SMALL_BOX + '[walls.x_min]\nkind = "copper"\n',
                  "walls.x_min.kind: must be one of"),
    "wall not in mesh": (SMALL_BOX + '[walls.lid]\nkind = "pmc"\n',
                         "walls.lid: this box has no wall 'lid'"),
    "not toml": ("[geometry\nbuilder = box", "not valid TOML"),
    "no geometry": ("[solve]\nmodes = 2\n", "geometry: the [geometry] table is missing"),
    "zero modes": (SMALL_BOX.replace("modes = 3", "modes = 0"),
                   "solve.modes: must be a whole number from 1 to 1000"),
    "bad form": (SMALL_BOX.replace("modes = 3", 'modes = 3\nform = "B"'), "solve.form: must be"),
    "bad factorization": (SMALL_BOX.replace("modes = 3", 'modes = 3\nfactorization = "lu"'),
                          "solve.factorization: must be one of 'auto', 'superlu', 'pardiso'"),
}


@pytest.mark.parametrize("name", list(BAD_CASES))
def test_bad_input_gets_one_clear_message(tmp_path, capsys, name):
    text, expected = BAD_CASES[name]
    case = write_case(tmp_path, text)
    out = tmp_path / "results"
    assert main(["solve", str(case), "--out", str(out), "-q"]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"femcav: error: {case}")
    assert expected in err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert not out.exists()


def test_missing_case_file(tmp_path, capsys):
    assert main(["solve", str(tmp_path / "nowhere.toml")]) == 2
    assert "nowhere.toml: case file not found" in capsys.readouterr().err


def test_mesh_region_without_material(tmp_path, capsys):
    _slab_mesh(tmp_path)
    case = write_case(tmp_path, '[geometry]\nmesh = "two_regions.msh"\n[regions.air]\neps_r = 1\n')
    assert main(["solve", str(case), "-q"]) == 2
    err = capsys.readouterr().err
    assert "regions: the mesh region(s) 'slab' have no material" in err
    assert not (tmp_path / "case-results").exists()


def test_missing_mesh_file(tmp_path, capsys):
    case = write_case(tmp_path, '[geometry]\nmesh = "absent.msh"\n')
    assert main(["solve", str(case), "-q"]) == 2
    err = capsys.readouterr().err
    assert f"{case}: geometry.mesh: mesh file " in err and "absent.msh' not found" in err


def test_mesh_without_tetrahedra(tmp_path, capsys):
    flat = meshio.Mesh(np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0.0]]), [("triangle", [[0, 1, 2]])])
    meshio.write(tmp_path / "flat.msh", flat, file_format="gmsh22", binary=False)
    case = write_case(tmp_path, '[geometry]\nmesh = "flat.msh"\n')
    assert main(["solve", str(case), "-q"]) == 2
    assert "the mesh has no tetrahedra" in capsys.readouterr().err


def test_imported_gmsh22_mesh_with_unit(tmp_path, capsys):
    # The same two-region box as a gmsh 2.2 file in millimetres.
    from conftest import box_with_blocks as write
    write(tmp_path / "mm.msh", (20.0, 10.0, 25.0), {"slab": (0, 0, 0, 5.0, 10.0, 25.0)},
          mesh_size=4.0, msh_version=2.2)
    case = write_case(tmp_path, '[geometry]\nmesh = "mm.msh"\nmesh_unit = "mm"\n'
                                '[regions.air]\neps_r = 1\n[regions.slab]\neps_r = 1\n'
                                '[solve]\nmodes = 1\n')
    assert main(["solve", str(case), "-q", "--no-report"]) == 0
    document = json.loads((tmp_path / "case-results" / "modes.json").read_text())
    # Both regions vacuum: the empty-box TE101 again (Pozar §6.3), coarse mesh.
    f = document["modes"][0]["frequency_hz"]
    assert f == pytest.approx(299792458 / 2 * math.hypot(1 / 0.020, 1 / 0.025), rel=0.03)


def test_unreadable_mesh(tmp_path, capsys):
    (tmp_path / "junk.msh").write_text("$MeshFormat\nnot really\n")
    (tmp_path / "junk.vtu").write_text("<VTKFile")
    for name in ("junk.msh", "junk.vtu"):
        case = write_case(tmp_path, f'[geometry]\nmesh = "{name}"\n')
        assert main(["solve", str(case), "-q"]) == 2
        err = capsys.readouterr().err
        assert f"{name}: meshio cannot read this file" in err and len(err.splitlines()) == 1


@pytest.mark.parametrize("args", [["solve"], ["solve", "x.toml", "--modes", "abc"],
                                  ["frob"], ["sweep", "x.toml", "--jobs", "two"],
                                  ["solve", "x.toml", "--form", "\x1b[31mX"]])
def test_command_line_mistakes_are_one_line_and_exit_2(args, capsys):
    # the house rule (README, exit statuses) holds for argument mistakes too
    with pytest.raises(SystemExit) as stopped:
        main(args)
    assert stopped.value.code == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and err.startswith("femcav: error: ")
    assert "\x1b" not in err and "usage:" not in err
