"""Every demo case in geometries/ is a valid case whose mesh passes the model checks, and the
family scripts write a mesh and a picture."""

import subprocess
import sys
from pathlib import Path

import numpy as np
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
    # A copy of the script, its helper and its case in tmp_path: the script writes next to
    # its case, and tests never write into the checkout.
    import shutil

    from PIL import Image

    from femcav.geometry import coax, read_mesh
    from femcav.viz.mesh_picture import IMAGE_SIZE

    for name in ("comb_line_resonator.py", "comb_line_resonator.toml", "_demo.py"):
        shutil.copy(FOLDER / name, tmp_path / name)
    run = subprocess.run([sys.executable, str(tmp_path / "comb_line_resonator.py")],
                         capture_output=True, text=True, cwd=tmp_path, check=True)
    folder = tmp_path / "comb_line_resonator-results"
    mesh = read_mesh(folder / "mesh.msh")
    # the coaxial builder's regions and walls, and the count the script printed
    assert set(mesh.region_names) == set(coax.REGIONS) and set(mesh.wall_names) == set(coax.WALLS)
    assert f"{mesh.n_tets} tetrahedra" in run.stdout and "minimum quality" in run.stdout
    # 60 mm long, radii 10 and 3 mm: the annulus's volume, less what chords cut off
    assert mesh.tet_volumes().sum() == pytest.approx(np.pi * (0.01**2 - 0.003**2) * 0.06,
                                                     rel=2e-2)
    with Image.open(folder / "mesh.png") as image:
        assert image.size == IMAGE_SIZE
        assert np.asarray(image.convert("L"), dtype=float).std() > 5   # not a blank canvas
