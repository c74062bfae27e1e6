"""The distributed backend (PETSc/SLEPc over MPI) against the serial solver on the same mesh
and against the closed-form frequencies of a rectangular box (Pozar, Microwave Engineering,
4th ed., §6.3, section number from memory; femcav/analytic/box.py).

The distributed runs need Debian's petsc4py/slepc4py/mpi4py, which are built for Debian's
own Python: they run in the environment scripts/distributed_env.sh makes (its Python in
FEMCAV_DISTRIBUTED_PYTHON, else .dist-env/bin/python of this checkout, which .ci/run makes),
through `mpiexec -n 2 ... -m femcav solve`. Without it those tests skip, saying why. The
serial reference is solved here, in-process, on the same mesh file.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from femcav.analytic.box import lowest_box_frequencies
from femcav.cli import main

A, B, D = 0.02286, 0.01016, 0.030     # m: a WR-90-sized cross-section, 30 mm long
ROOT = Path(__file__).resolve().parent.parent
TIMEOUT_S = 120
# Two solves of one mesh by two eigensolvers (ARPACK, SLEPc) converged to 1e-10: their
# Rayleigh quotients agree to round-off far below this.
AGREEMENT = 1e-8

BOX = f"""
title = "Larkspur Microwave Works test box (made up)"
[geometry]
builder = "box"
width = "{A * 1e3} mm"
height = "{B * 1e3} mm"
length = "{D * 1e3} mm"
[mesh]
size = "3 mm"
"""

FROM_FILE = """
title = "Larkspur Microwave Works test box, meshed once (made up)"
[geometry]
mesh = "mesh/mesh.msh"
[regions.inside]
eps_r = 1
[solve]
{solve}
"""


def _distributed_python() -> Path | None:
    named = os.environ.get("FEMCAV_DISTRIBUTED_PYTHON")
    path = Path(named) if named else ROOT / ".dist-env" / "bin" / "python"
    return path if path.exists() else None


def _launcher() -> list[str]:
    """mpiexec with the flags Open MPI needs to start 2 processes as root on any machine."""
    mpiexec = shutil.which("mpiexec")
    if mpiexec is None:
        pytest.skip("no mpiexec on PATH (scripts/distributed_env.sh installs Open MPI)")
    version = subprocess.run([mpiexec, "--version"], capture_output=True, text=True).stdout
    openmpi = "Open MPI" in version or "OpenRTE" in version
    return [mpiexec] + (["--oversubscribe", "--allow-run-as-root"] if openmpi else [])


@pytest.fixture(scope="module")
def distributed_python() -> Path:
    python = _distributed_python()
    if python is None:
        pytest.skip("no distributed environment: set FEMCAV_DISTRIBUTED_PYTHON or run "
                    "scripts/distributed_env.sh .dist-env")
    probe = subprocess.run([str(python), "-c", "import petsc4py, slepc4py, mpi4py, femcav"],
                           capture_output=True, text=True, timeout=TIMEOUT_S)
    if probe.returncode != 0:
        pytest.skip(f"{python} cannot import petsc4py, slepc4py, mpi4py and femcav: "
                    f"{probe.stderr.strip().splitlines()[-1:]}")
    return python


@pytest.fixture(scope="module")
def meshed(tmp_path_factory) -> Path:
    """A folder with one mesh of the box (mesh/mesh.msh), read by every solve below."""
    folder = tmp_path_factory.mktemp("distributed")
    (folder / "box.toml").write_text(BOX)
    assert main(["mesh", str(folder / "box.toml"), "--out", str(folder / "mesh")]) == 0
    return folder


def _case(folder: Path, name: str, solve: str) -> Path:
    path = folder / f"{name}.toml"
    path.write_text(FROM_FILE.format(solve=solve))
    return path


def _serial(case: Path, out: Path) -> dict:
    assert main(["solve", str(case), "--out", str(out), "--quiet", "--no-report"]) == 0
    return json.loads((out / "modes.json").read_text())


def _distributed(python: Path, case: Path, out: Path, processes: int,
                 petsc_options: str = "") -> dict:
    return _run(python, case, out, processes, "distributed", petsc_options)


def _run(python: Path, case: Path, out: Path, processes: int, method: str,
         petsc_options: str = "") -> dict:
    command = [str(python), "-m", "femcav", "solve", str(case), "--out", str(out),
               "--no-report", "--method", method]
    if processes > 1:
        command = _launcher() + ["-n", str(processes)] + command
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1",
               PETSC_OPTIONS=petsc_options)
    env["PYTHONPATH"] = str(ROOT)    # this checkout's femcav, nothing of another Python's
    run = subprocess.run(command, capture_output=True, text=True, timeout=TIMEOUT_S,
                         cwd=case.parent, env=env)
    assert run.returncode == 0, run.stderr[-2000:]
    return dict(json.loads((out / "modes.json").read_text()), progress=run.stderr)


def _frequencies(result: dict) -> np.ndarray:
    return np.array([m["frequency_hz"] for m in result["modes"]])


def _same_modes(distributed: dict, serial: dict) -> None:
    assert distributed["dofs"] == serial["dofs"]
    assert len(distributed["modes"]) == len(serial["modes"])
    np.testing.assert_allclose(_frequencies(distributed), _frequencies(serial),
                               rtol=AGREEMENT, atol=0)
    assert all(m["passed"] for m in distributed["modes"])


@pytest.fixture(scope="module")
def lowest(distributed_python, meshed, tmp_path_factory) -> tuple[Path, dict, Path, dict]:
    """The 10 lowest modes of the box, serially and on 2 processes: (folder, modes.json)
    of each."""
    case = _case(meshed, "lowest", "modes = 10")
    out = tmp_path_factory.mktemp("lowest")
    serial = _serial(case, out / "serial")
    distributed = _distributed(distributed_python, case, out / "two", 2)
    return out / "serial", serial, out / "two", distributed


def test_two_processes_give_the_serial_lowest_modes(lowest):
    serial_folder, serial, folder, distributed = lowest
    assert re.search(r"MUMPS factorised K - σM \(\d+ DOFs, 2 processes\)",
                     distributed["progress"])
    assert distributed["factorization"] == "MUMPS over 2 MPI processes"
    _same_modes(distributed, serial)
    # a 3 mm mesh of first order elements: within 3 % of the closed form (Pozar §6.3)
    reference = np.array(lowest_box_frequencies(A, B, D, 10))
    assert np.max(np.abs(_frequencies(distributed) / reference - 1)) < 3e-2
    # one writer of the tables; the fields as one piece per process and their index
    pieces = {"fields.pvtu", "fields_piece_0.vtu", "fields_piece_1.vtu"}
    assert sorted(p.name for p in folder.iterdir()) == sorted(
        {p.name for p in serial_folder.iterdir()} - {"fields.vtu"} | pieces)


def _centroid_keys(mesh) -> list[tuple]:
    """Each tetrahedron's centroid, rounded to 1 nm: the same cell in two files."""
    tets = mesh.cells_dict["tetra"]
    return [tuple(c) for c in np.round(mesh.points[tets].mean(axis=1) * 1e9).astype(np.int64)]


def test_the_fields_are_one_vtk_piece_per_process_and_equal_the_serial_fields(lowest):
    """fields.pvtu (VTK's XML PUnstructuredGrid, "VTK File Formats", Kitware; common
    practice) lists one .vtu per process; read with meshio, the pieces hold every cell of
    the serial fields.vtu once, with its region and the same fields. A mode's field is
    fixed up to its sign (both are scaled to 1 J), so each is compared after aligning the
    sign; modes 8 and 9 of the box are degenerate in the closed form (TE111 and TM111,
    Pozar §6.3), so any combination of the two is a valid answer and they are left out."""
    import xml.etree.ElementTree as ElementTree

    import meshio

    serial_folder, _, folder, _ = lowest
    index = ElementTree.parse(folder / "fields.pvtu").getroot()
    assert index.attrib["type"] == "PUnstructuredGrid"
    sources = [piece.attrib["Source"] for piece in index.iter("Piece")]
    assert sources == ["fields_piece_0.vtu", "fields_piece_1.vtu"]
    pieces = [meshio.read(folder / source) for source in sources]
    whole = meshio.read(serial_folder / "fields.vtu")
    row = {key: i for i, key in enumerate(_centroid_keys(whole))}
    rows = [np.array([row[key] for key in _centroid_keys(piece)]) for piece in pieces]
    assert all(0 < r.size < len(row) for r in rows)       # each process wrote a share
    assert np.array_equal(np.sort(np.concatenate(rows)), np.arange(len(row)))  # each cell once
    declared = {a.attrib["Name"] for a in index.find("PUnstructuredGrid/PCellData")}
    assert declared == set(whole.cell_data)
    reference = lowest_box_frequencies(A, B, D, 10)
    for piece, r in zip(pieces, rows):
        assert np.array_equal(piece.cell_data["region"][0], whole.cell_data["region"][0][r])
    separate = [k for k in range(1, 11)
                if all(abs(reference[k - 1] / f - 1) > 5e-3 for j, f in enumerate(reference, 1)
                       if j != k)]
    assert separate == [1, 2, 3, 4, 5, 6, 7, 10]
    for k in separate:
        for name in (f"m{k:02d}_E", f"m{k:02d}_H"):
            serial_field = whole.cell_data[name][0]
            field = np.empty_like(serial_field)
            for piece, r in zip(pieces, rows):
                field[r] = piece.cell_data[name][0]
            sign = np.sign(np.sum(field * serial_field))
            np.testing.assert_allclose(sign * field, serial_field, rtol=0,
                                       atol=1e-6 * np.abs(serial_field).max())


def test_pyvista_reads_the_pieces_as_one_grid(lowest):
    """VTK's own parallel reader (through pyvista, a general-purpose library) opens the
    index and finds every cell of the serial file."""
    pv = pytest.importorskip("pyvista")
    serial_folder, _, folder, _ = lowest
    grid, whole = pv.read(folder / "fields.pvtu"), pv.read(serial_folder / "fields.vtu")
    assert grid.n_cells == whole.n_cells
    assert set(whole.cell_data) <= set(grid.cell_data)
    np.testing.assert_allclose(np.sort(grid.cell_data["m01_we"]),
                               np.sort(whole.cell_data["m01_we"]), rtol=1e-6)
    # femcav show and the report draw from it where a folder has no fields.vtu
    from femcav.viz.show import read_fields
    assert read_fields(folder, [1, 2], "H").n_cells == whole.n_cells


def test_davidson_with_ams_gives_the_serial_lowest_modes(distributed_python, meshed, tmp_path):
    """The preconditioned eigensolver (PETSc option -femcav_eigensolver davidson): no
    factorisation of K - σM, hypre AMS on K + τM, the gradient kernel projected out."""
    case = _case(meshed, "davidson", "modes = 3")
    serial = _serial(case, tmp_path / "serial")
    distributed = _distributed(distributed_python, case, tmp_path / "two", 2,
                               "-femcav_eigensolver davidson")
    assert "hypre AMS set up" in distributed["progress"]
    assert "MUMPS factorised K - σM" not in distributed["progress"]
    _same_modes(distributed, serial)


def test_two_processes_give_the_serial_modes_near_a_target(distributed_python, meshed,
                                                           tmp_path):
    reference = lowest_box_frequencies(A, B, D, 10)
    target = 0.5 * (reference[5] + reference[6])       # between two modes: nothing at σ
    case = _case(meshed, "near", f'modes = 6\nnear = "{target / 1e9:.6f} GHz"')
    serial = _serial(case, tmp_path / "serial")
    distributed = _distributed(distributed_python, case, tmp_path / "two", 2)
    _same_modes(distributed, serial)
    nearest = sorted(sorted(reference, key=lambda f: abs(f - target))[:6])
    np.testing.assert_allclose(_frequencies(distributed), nearest, rtol=3e-2)


def test_two_processes_give_the_serial_modes_of_the_dr_fixture(distributed_python, tmp_path):
    """The dielectric-resonator fixture of geometries/ (a made-up Larkspur part), coarse:
    three regions, metal walls (Q by perturbation) and four symmetry classes, each a solve
    all processes take part in. Both solves run in the distributed environment, whose gmsh
    makes one mesh for both (the DOF counts are compared)."""
    text = (ROOT / "geometries" / "dro_fixture.toml").read_text()
    text = re.sub(r'(?m)^size = .*$', 'size = "3.5 mm"', text)
    text = re.sub(r'(?m)^max_frequency = .*$', "", text)
    text = re.sub(r'(?m)^modes = .*$', "modes = 2", text)
    case = tmp_path / "dr.toml"
    case.write_text(text)
    serial = _run(distributed_python, case, tmp_path / "serial", 1, "direct")
    distributed = _distributed(distributed_python, case, tmp_path / "two", 2)
    _same_modes(distributed, serial)
    # the Q integrals and the resolution are summed over the processes' own elements and
    # wall faces (post.distributed_post): the serial sums in another order
    for key in ("q_total", "q_wall", "q_dielectric", "points_per_wavelength"):
        np.testing.assert_allclose([m[key] for m in distributed["modes"]],
                                   [m[key] for m in serial["modes"]], rtol=AGREEMENT)
    for key in ("wall_loss_share", "region_loss_share", "filling_factor"):
        for d, s in zip(distributed["modes"], serial["modes"]):
            assert d[key].keys() == s[key].keys()
            np.testing.assert_allclose(list(d[key].values()), list(s[key].values()),
                                       rtol=AGREEMENT, atol=1e-14)
    # wall_loss.vtu: each face's loss, gathered from the process that owns its element
    import meshio
    walls = [meshio.read(tmp_path / run / "wall_loss.vtu") for run in ("two", "serial")]
    for name in ("m01_loss", "m02_loss"):
        np.testing.assert_allclose(walls[0].cell_data[name][0], walls[1].cell_data[name][0],
                                   rtol=AGREEMENT, atol=0)


@pytest.mark.parametrize("solve", ["modes = 3\norder = 2", 'modes = 3\nform = "H"'],
                         ids=["order 2", "H form"])
def test_two_processes_give_the_serial_modes_at_order_2_and_in_the_h_form(
        distributed_python, meshed, tmp_path, solve):
    """Second order has DOFs on edges, faces and inside elements (each process sets the
    rows of G it owns from its own elements); the H form keeps the boundary DOFs that the
    E form drops."""
    case = _case(meshed, "variant", solve)
    _same_modes(_distributed(distributed_python, case, tmp_path / "two", 2),
                _serial(case, tmp_path / "serial"))


def test_one_process_equals_the_serial_solve(distributed_python, meshed, tmp_path):
    case = _case(meshed, "one", "modes = 4")
    _same_modes(_distributed(distributed_python, case, tmp_path / "one", 1),
                _serial(case, tmp_path / "serial"))


def test_several_processes_without_the_distributed_method_are_refused(distributed_python,
                                                                      meshed, tmp_path):
    case = _case(meshed, "refused", "modes = 2")
    out = tmp_path / "out"
    run = subprocess.run(_launcher() + ["-n", "2", str(distributed_python), "-m", "femcav",
                                        "solve", str(case), "--out", str(out), "--quiet"],
                         capture_output=True, text=True, timeout=TIMEOUT_S, cwd=meshed)
    assert run.returncode != 0
    assert "use --method distributed" in run.stderr
    assert not out.exists()


def test_missing_petsc_is_one_line_and_exit_2(meshed, tmp_path, capsys):
    try:
        import petsc4py  # noqa: F401
        pytest.skip("petsc4py is importable here; this checks a Python without it")
    except ImportError:
        pass
    case = _case(meshed, "missing", 'modes = 2\nmethod = "distributed"')
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out)]) == 2
    lines = capsys.readouterr().err.strip().splitlines()
    assert len(lines) == 1
    assert "petsc4py" in lines[0] and "scripts/distributed_env.sh" in lines[0]
    assert not out.exists()


def test_other_commands_refuse_to_run_under_mpiexec(meshed, tmp_path, monkeypatch, capsys):
    # what Open MPI's mpiexec -n 2 sets in each process it starts (common practice)
    monkeypatch.setenv("OMPI_COMM_WORLD_SIZE", "2")
    out = tmp_path / "mesh"
    assert main(["mesh", str(meshed / "box.toml"), "--out", str(out)]) == 2
    assert "only femcav solve" in capsys.readouterr().err
    assert not out.exists()


def test_what_runs_serially_is_refused_before_loading_petsc(meshed, tmp_path, capsys):
    case = _case(meshed, "complex", 'modes = 2\nmethod = "distributed"\ncomplex_check = true')
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out)]) == 2
    assert "the complex check and losses inside the solve run serially" in \
        capsys.readouterr().err
    assert not out.exists()


CHECKS_SCRIPT = """
import json, sys
import numpy as np
from femcav.eigen.factorization import get_factorizer
from femcav.eigen.projection import GradientProjector
from femcav.fem.assembly import assemble
from femcav.fem.distributed_assembly import assemble_distributed
from femcav.fem.gradient import kernel_basis
from femcav.fem.space import build_space
from femcav.geometry.importer import read_mesh
from femcav.materials import Material
from femcav.model import make_model
from femcav.post.checks import check_modes

space = build_space(make_model(read_mesh(sys.argv[1]), {"inside": Material()}, {}), "E", 1)
K, M, G = assemble_distributed(space)
Ks, Ms = assemble(space)
X = np.random.default_rng(1).standard_normal((Ks.shape[0], 4))   # the same on every process
values = np.array([1.0, 2.0, 3.0, 4.0]) * 1e4
serial = GradientProjector(Ms, kernel_basis(space), get_factorizer("superlu"), hermitian=True)
from femcav.eigen.distributed_matrix import DistributedVectors


def gathered(*args):
    raise AssertionError("a whole vector was gathered during the checks")


DistributedVectors.to_global = gathered
pairs = [check_modes(Ks, Ms, serial, values, X),
         check_modes(K, M, M.gradient_projector(G), values, X)]
# the residual written out with SciPy's sparse products alone
explicit = (np.linalg.norm(Ks @ X - (Ms @ X) * values, axis=0)
            / np.linalg.norm((Ms @ X) * values, axis=0))
if K.stack.rank == 0:
    print(json.dumps({"explicit": explicit.tolist(),
                      "checks": [[[c.residual, c.divergence, c.orthogonality] for c in p]
                                 for p in pairs]}))
"""


def test_the_checks_run_in_petsc_and_equal_the_numpy_checks(distributed_python, meshed,
                                                            tmp_path):
    """post.checks on matrices spread over 2 processes (every product and norm in PETSc,
    post.distributed_checks) against the same checks on SciPy matrices, for vectors that
    are no eigenvectors (residual, gradient content and overlap all of order 1, so that the
    comparison means something). Gathering a whole vector is made an error there."""
    script = tmp_path / "checks.py"
    script.write_text(CHECKS_SCRIPT)
    run = subprocess.run(_launcher() + ["-n", "2", str(distributed_python), str(script),
                                        str(meshed / "mesh" / "mesh.msh")],
                         capture_output=True, text=True, timeout=TIMEOUT_S,
                         env=dict(os.environ, OMP_NUM_THREADS="1", PYTHONPATH=str(ROOT)))
    assert run.returncode == 0, run.stderr[-2000:]
    out = json.loads(run.stdout.strip().splitlines()[-1])
    serial, distributed = np.array(out["checks"])
    assert np.all(serial > 1e-3)
    np.testing.assert_allclose(distributed, serial, rtol=1e-10)
    np.testing.assert_allclose(distributed[:, 0], out["explicit"], rtol=1e-10)


FAILING_RANK_ZERO = """
import errno, sys
from mpi4py import MPI
import femcav.solve_command as command
from femcav.cli import main


def full_disk(files, *args):
    raise OSError(errno.ENOSPC, "No space left on device", str(files.folder / "table.txt"))


if MPI.COMM_WORLD.rank == 0:
    command._write_tables = full_disk
sys.exit(main(sys.argv[1:]))
"""


def test_a_failure_of_rank_0_before_the_pieces_ends_every_process(distributed_python, meshed,
                                                                 tmp_path):
    """Rank 0 fails while writing the tables (a full disk, simulated): the other process,
    which waits to write its piece of fields.pvtu, is released and writes nothing, so the
    run ends with rank 0's one-line error instead of hanging."""
    case = _case(meshed, "full", "modes = 2")
    script = tmp_path / "fail.py"
    script.write_text(FAILING_RANK_ZERO)
    out = tmp_path / "out"
    run = subprocess.run(_launcher() + ["-n", "2", str(distributed_python), str(script),
                                        "solve", str(case), "--out", str(out), "--quiet",
                                        "--method", "distributed"],
                         capture_output=True, text=True, timeout=TIMEOUT_S, cwd=meshed,
                         env=dict(os.environ, OMP_NUM_THREADS="1", PYTHONPATH=str(ROOT)))
    assert run.returncode != 0
    assert "the disk is full" in run.stderr
    assert not [p.name for p in out.iterdir() if "fields" in p.name]
