"""Shared test helpers: meshes written as gmsh .msh files, so that tests also exercise mesh
import. Test modules import them with ``from conftest import ...``."""

import os
import sys
from pathlib import Path

# One BLAS/OpenMP thread unless the caller says otherwise, set before numpy loads: on the
# 2-vCPU reference machine extra threads slowed the many small direct solves of the suite
# (measured: 373 s for the whole default run with the libraries' own thread counts).
for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

sys.path.insert(0, str(Path(__file__).parent))

import numpy as np  # noqa: E402
import pytest  # noqa: E402

from femcav.geometry.gmsh_session import gmsh_model  # noqa: E402

CHECKOUT = Path(__file__).resolve().parent.parent
# What Python and pytest themselves keep in the checkout (byte code, the test cache, an
# editable install's metadata, a local environment), and git's own folder.
NOT_OURS = {"__pycache__", ".pytest_cache", ".git", ".venv"}


def checkout_files() -> dict[str, int]:
    """Every file under the checkout (path -> modification time), outside NOT_OURS."""
    found = {}
    for folder, subfolders, files in os.walk(CHECKOUT):
        subfolders[:] = [d for d in subfolders
                         if d not in NOT_OURS and not d.endswith(".egg-info")]
        for name in files:
            path = os.path.join(folder, name)
            found[path] = os.stat(path).st_mtime_ns
    return found


@pytest.fixture(scope="session", autouse=True)
def checkout_stays_clean():
    """Tests write only into pytest's tmp_path: fail the run if any file of the checkout
    appeared or changed while it ran."""
    before = checkout_files()
    yield
    after = checkout_files()
    touched = sorted(p for p, stamp in after.items() if before.get(p) != stamp)
    assert not touched, f"the tests wrote into the checkout: {touched[:10]}"


def faces_by_bounds(gmsh, predicate) -> list[int]:
    """Tags of the surfaces whose bounding box (xmin, ymin, zmin, xmax, ymax, zmax) passes."""
    return [tag for dim, tag in gmsh.model.getEntities(2)
            if predicate(gmsh.model.getBoundingBox(dim, tag))]


def box_with_blocks(path: Path, size: tuple[float, float, float],
                    blocks: dict[str, tuple[float, float, float, float, float, float]],
                    mesh_size: float, msh_version: float = 4.1) -> Path:
    """A box 0..size with rectangular blocks (x0, y0, z0, dx, dy, dz) as named regions.

    The rest of the box is region "air"; the outer faces are walls x_min ... z_max.
    """
    a, b, d = size
    with gmsh_model("blocks") as gmsh:
        occ = gmsh.model.occ
        outer = occ.addBox(0, 0, 0, a, b, d)
        inner = {name: occ.addBox(*spec) for name, spec in blocks.items()}
        _, children = occ.fragment([(3, outer)], [(3, t) for t in inner.values()])
        occ.synchronize()
        block_tags = {name: [t for _, t in children[i + 1]] for i, name in enumerate(inner)}
        taken = {t for tags in block_tags.values() for t in tags}
        air = [t for _, t in children[0] if t not in taken]
        gmsh.model.addPhysicalGroup(3, air, name="air")
        for name, tags in block_tags.items():
            gmsh.model.addPhysicalGroup(3, tags, name=name)
        tol = 1e-4 * max(size)
        for axis, axis_name in enumerate("xyz"):
            for side, at in (("min", 0.0), ("max", size[axis])):
                tags = faces_by_bounds(gmsh, lambda bb, i=axis, v=at:
                                       abs(bb[i] - v) < tol and abs(bb[i + 3] - v) < tol)
                gmsh.model.addPhysicalGroup(2, tags, name=f"{axis_name}_{side}")
        gmsh.option.setNumber("Mesh.MeshSizeMax", mesh_size)
        gmsh.option.setNumber("Mesh.Algorithm3D", 1)
        gmsh.model.mesh.generate(3)
        gmsh.option.setNumber("Mesh.MshFileVersion", msh_version)
        gmsh.write(str(path))
    return path


def box_with_rod(path: Path, size: tuple[float, float, float], rod_radius: float,
                 mesh_size: float) -> Path:
    """A box 0..size with a metal rod of ``rod_radius`` along z through its centre, removed
    from the mesh: a shorted coaxial line with a square outer conductor. Region "gap"; the rod
    surface is the wall "rod", the outer faces stay unnamed (PEC)."""
    a, b, d = size
    with gmsh_model("rod") as gmsh:
        occ = gmsh.model.occ
        outer = occ.addBox(0, 0, 0, a, b, d)
        rod = occ.addCylinder(a / 2, b / 2, 0, 0, 0, d, rod_radius)
        cut, _ = occ.cut([(3, outer)], [(3, rod)])
        occ.synchronize()
        gmsh.model.addPhysicalGroup(3, [t for _, t in cut], name="gap")
        tol = 1e-4 * max(size)
        curved = faces_by_bounds(gmsh, lambda bb: bb[0] > tol and bb[3] < a - tol)
        gmsh.model.addPhysicalGroup(2, curved, name="rod")
        gmsh.option.setNumber("Mesh.MeshSizeMax", mesh_size)
        gmsh.option.setNumber("Mesh.Algorithm3D", 1)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(path))
    return path


def sorted_rows(a):
    """The rows of a 2D array in lexicographic order: compares point sets whatever their
    numbering (the mesh reader renumbers vertices)."""
    return a[np.lexsort(a.T[::-1])]


def solved_folder(where: Path, case_text: str, *options: str) -> Path:
    """Write ``case_text`` to where/case.toml, run ``femcav solve`` on it (with ``options``)
    and return the result folder."""
    from femcav.cli import main

    case = where / "case.toml"
    case.write_text(case_text)
    assert main(["solve", str(case), "--out", str(where / "out"), "-q", *options]) == 0
    return where / "out"


def swept_folder(where: Path, case_text: str, **options):
    """Write ``case_text`` to where/box.toml and run its sweep into where/out: (the sweep
    document, the output folder, the case file)."""
    from femcav.study.sweep import run_sweep

    case = where / "box.toml"
    case.write_text(case_text)
    document, out = run_sweep(case, out=where / "out", **options)
    return document, out, case


def box_case(size: str = "4 mm", modes: int = 2, extra: str = "",
             dims: tuple[str, str, str] = ("20 mm", "10 mm", "25 mm")) -> str:
    """The text of a case file for an empty box (width, height, length ``dims``), mesh
    ``size``, ``modes`` modes, with ``extra`` tables appended."""
    width, height, length = dims
    return (f'[geometry]\nbuilder = "box"\nwidth = "{width}"\nheight = "{height}"\n'
            f'length = "{length}"\n[mesh]\nsize = "{size}"\n[solve]\nmodes = {modes}\n'
            + extra)
