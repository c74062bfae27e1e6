"""Every demo case in geometries/ is a valid case whose mesh passes the model checks, and the
family scripts write a mesh and a picture."""

import subprocess
import sys
from pathlib import Path

import pytest

from femcav.case import build_mesh, case_model, load_case

FOLDER = Path(__file__).parent.parent / "geometries"
CASES = sorted(FOLDER.glob("*.toml"))


def test_every_case_has_a_script():
    assert CASES and all(case.with_suffix(".py").is_file() for case in CASES)


@pytest.mark.parametrize("case", CASES, ids=[c.stem for c in CASES])
def test_demo_case_builds_a_valid_model(case):
    loaded = load_case(case)
    mesh = build_mesh(loaded)
    model = case_model(loaded, mesh)
    assert mesh.n_tets > 100 and set(model.materials) == set(mesh.region_names)
    assert "fictional" in case.read_text()


def test_family_script_writes_mesh_and_picture(tmp_path):
    script = FOLDER / "comb_line_resonator.py"
    run = subprocess.run([sys.executable, str(script)], capture_output=True, text=True,
                         cwd=tmp_path, check=True)
    folder = FOLDER / "comb_line_resonator-results"
    try:
        assert "minimum quality" in run.stdout
        for name in ("mesh.msh", "mesh.vtu", "mesh.png"):
            assert (folder / name).stat().st_size > 0
    finally:
        for name in ("mesh.msh", "mesh.vtu", "mesh.png"):
            (folder / name).unlink(missing_ok=True)
        if folder.exists() and not any(folder.iterdir()):
            folder.rmdir()
