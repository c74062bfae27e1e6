"""Failures of the environment (a file in the way, a read-only or full disk, Ctrl-C, no
memory, a broken result folder) get one line on stderr and their own exit status from
femcav.exit_codes, never a traceback, and leave no temporary file behind."""

import errno
import json
import os
import shutil
import signal
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import pytest

import femcav.solve_command
from conftest import box_case
from femcav import exit_codes
from femcav.cli import main

ROOT = Path(__file__).resolve().parents[1]

CASE = 'title = "small box"\n' + box_case("4 mm", 2)
SWEEP = CASE + '[sweep]\nparameter = "geometry.length"\nvalues = ["25 mm", "26 mm"]\n'


def write_case(folder: Path, text: str = CASE) -> Path:
    path = folder / "case.toml"
    path.write_text(text)
    return path


def one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    return lines[0]


def temporaries(folder: Path) -> list[Path]:
    return [p for p in folder.rglob("*") if "partial" in p.name or ".tmp" in p.name]


@pytest.mark.parametrize("command", ["solve", "mesh", "sweep"])
def test_out_naming_a_file(tmp_path, capsys, command):
    case = write_case(tmp_path, SWEEP if command == "sweep" else CASE)
    existing = tmp_path / "notes.txt"
    existing.write_text("mine")
    assert main([command, str(case), "--out", str(existing), "-q"]) == exit_codes.FILE_SYSTEM
    line = one_line(capsys.readouterr().err)
    assert str(existing) in line and "not a folder" in line
    assert existing.read_text() == "mine"


def _read_only(monkeypatch):
    """Every new file fails as on a read-only file system (tests may run as root, whom
    permissions do not stop)."""
    def refuse(*args, dir=None, **kwargs):
        raise OSError(errno.EROFS, os.strerror(errno.EROFS), str(dir))
    monkeypatch.setattr(tempfile, "mkstemp", refuse)


@pytest.mark.parametrize("command", ["solve", "mesh", "sweep"])
def test_read_only_output_folder(tmp_path, capsys, monkeypatch, command):
    case = write_case(tmp_path, SWEEP if command == "sweep" else CASE)
    out = tmp_path / "out"
    _read_only(monkeypatch)
    assert main([command, str(case), "--out", str(out), "-q"]) == exit_codes.FILE_SYSTEM
    line = one_line(capsys.readouterr().err)
    assert "read-only" in line.lower() and str(tmp_path) in line and "partial" not in line


@pytest.mark.skipif(os.geteuid() == 0, reason="permissions do not stop root")
def test_folder_without_write_permission(tmp_path, capsys):
    case = write_case(tmp_path)
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o555)
    try:
        assert main(["solve", str(case), "--out", str(locked), "-q"]) == exit_codes.FILE_SYSTEM
    finally:
        locked.chmod(0o755)
    assert "permission" in one_line(capsys.readouterr().err).lower()


def _fill_then_fail(error):
    """A writer that writes part of its file, then fails with ``error`` (an OSError names
    the file being written, as the system's do)."""
    def writer(*args, **kwargs):
        path = next(a for a in args if isinstance(a, (str, Path)))
        Path(path).write_bytes(b"\0" * 4096)
        if isinstance(error, OSError):
            raise OSError(error.errno, error.strerror, str(path))
        raise error
    return writer


def test_disk_full_while_writing_keeps_the_previous_results(tmp_path, capsys, monkeypatch):
    case = write_case(tmp_path)
    out = tmp_path / "out"
    assert main(["solve", str(case), "--out", str(out), "-q", "--no-report"]) == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    capsys.readouterr()
    monkeypatch.setattr(femcav.solve_command, "write_vtu", _fill_then_fail(
        OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))))
    assert main(["solve", str(case), "--out", str(out), "-q", "--no-report"]) == \
        exit_codes.FILE_SYSTEM
    line = one_line(capsys.readouterr().err)
    # the file meant, not its temporary name
    assert "disk is full" in line and str(out / "fields.vtu") in line and "partial" not in line
    assert temporaries(out) == []
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before


def test_disk_full_in_a_sweep_leaves_no_temporary(tmp_path, capsys, monkeypatch):
    case = write_case(tmp_path, SWEEP)
    out = tmp_path / "out"
    monkeypatch.setattr(np, "savez_compressed", _fill_then_fail(
        OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))))
    assert main(["sweep", str(case), "--out", str(out), "-q"]) == exit_codes.FILE_SYSTEM
    assert "disk is full" in one_line(capsys.readouterr().err)
    assert temporaries(out) == []


def test_ctrl_c_while_writing(tmp_path, capsys, monkeypatch):
    case = write_case(tmp_path)
    out = tmp_path / "out"
    monkeypatch.setattr(femcav.solve_command, "write_vtu", _fill_then_fail(KeyboardInterrupt()))
    assert main(["solve", str(case), "--out", str(out), "-q"]) == exit_codes.INTERRUPTED
    assert "interrupted" in one_line(capsys.readouterr().err)
    assert temporaries(out) == [] and not (out / "modes.json").exists()


def test_ctrl_c_on_a_running_solve(tmp_path):
    """A real SIGINT, sent once the solve is under way."""
    # the pictures and the report still take seconds after the solve: the signal lands
    # before the end
    case = write_case(tmp_path, CASE.replace("modes = 2", "modes = 6"))
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OMP_NUM_THREADS": "1"}
    process = subprocess.Popen([sys.executable, "-m", "femcav.cli", "solve", str(case),
                                "--out", str(tmp_path / "out")],
                               stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                               env=env,     # SIGINT's default back (see test_mesh_budget)
                               preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    seen = []
    for line in process.stderr:
        seen.append(line)
        if "assembled" in line:
            process.send_signal(signal.SIGINT)
            break
    try:
        _, rest = process.communicate(timeout=120)
    finally:
        if process.poll() is None:
            process.kill()
    err = "".join(seen) + rest
    assert process.returncode == exit_codes.INTERRUPTED, err
    assert "Traceback" not in err and "interrupted" in err.strip().splitlines()[-1]
    assert temporaries(tmp_path) == []


def test_out_of_memory(tmp_path, capsys, monkeypatch):
    def no_memory(*args, **kwargs):
        raise MemoryError
    monkeypatch.setattr(femcav.solve_command, "solve_case", no_memory)
    case = write_case(tmp_path)
    assert main(["solve", str(case), "--out", str(tmp_path / "out"), "-q"]) == \
        exit_codes.OUT_OF_MEMORY
    assert "out of memory" in one_line(capsys.readouterr().err)


@pytest.fixture(scope="module")
def solved(tmp_path_factory):
    where = tmp_path_factory.mktemp("solved")
    case = write_case(where)
    assert main(["solve", str(case), "--out", str(where / "out"), "-q", "--no-report"]) == 0
    return where / "out"


def _break_fields_arrays(folder: Path) -> None:
    import meshio

    grid = meshio.read(folder / "fields.vtu")
    grid.cell_data = {"region": grid.cell_data["region"]}
    (folder / "fields.vtu").unlink()
    meshio.write(folder / "fields.vtu", grid)


BROKEN = {
    "empty folder": lambda f: [p.unlink() for p in f.iterdir()],
    "garbled modes.json": lambda f: (f / "modes.json").write_text('{"modes": [1, 2'),
    "modes.json of another kind": lambda f: (f / "modes.json").write_text("[1, 2, 3]"),
    "a mode entry without its frequency": lambda f: (f / "modes.json").write_text(
        json.dumps({**json.loads((f / "modes.json").read_text()),
                    "modes": [{"index": 1}]})),
    "fields.vtu missing": lambda f: (f / "fields.vtu").unlink(),
    "fields.vtu garbled": lambda f: (f / "fields.vtu").write_bytes(b"<VTKFile>\0\0\0 broken"),
    "fields.vtu without the mode arrays": _break_fields_arrays,
    "a sweep folder": lambda f: ([p.unlink() for p in f.iterdir()],
                                 (f / "sweep.json").write_text("{}")),
}


@pytest.mark.parametrize("name", list(BROKEN))
def test_show_on_a_broken_result_folder(tmp_path, capsys, solved, name):
    folder = tmp_path / "copy"
    shutil.copytree(solved, folder)
    BROKEN[name](folder)
    assert main(["show", str(folder)]) == exit_codes.BROKEN_RESULT_FOLDER
    assert str(folder) in one_line(capsys.readouterr().err)
    assert temporaries(folder) == []


def test_show_on_a_folder_that_does_not_exist(tmp_path, capsys):
    assert main(["show", str(tmp_path / "nowhere")]) == exit_codes.INPUT_ERROR
    assert "no such folder" in one_line(capsys.readouterr().err)


def test_exit_statuses_are_documented_in_the_readme_and_help():
    readme = (ROOT / "README.md").read_text()
    section = readme[readme.index("## Command line"):readme.index("## Case-file reference")]
    for code in exit_codes.MEANINGS:
        assert f"`{code}`" in section, code
    assert all(str(code) in exit_codes.epilog() for code in exit_codes.MEANINGS)
