"""A result folder holds exactly one run's files: a second case solved into it leaves none of
the first's, a user's own files stay, and temporaries of killed runs are cleaned up."""

import os
import time

from conftest import box_case
from femcav.cli import main

LOSSY_BOX = box_case("3 mm", 3, '[walls.x_min]\nkind = "metal"\nmetal = "copper"\n')
PLAIN_BOX = box_case("4 mm", 2)


def _quick_pictures(monkeypatch):
    """Pictures and report as stand-in files: the drawing is not what these tests are
    about, which files the folder keeps is."""
    import femcav.viz.report
    import femcav.viz.show
    import femcav.viz.spectrum

    def stand_in(*args, **kwargs):
        next(a for a in args if hasattr(a, "write_bytes")).write_bytes(b"picture")

    monkeypatch.setattr(femcav.viz.show, "draw_mode_picture", stand_in)
    monkeypatch.setattr(femcav.viz.spectrum, "write_spectrum", stand_in)
    monkeypatch.setattr(femcav.viz.report, "write_report", stand_in)


# a process id above Linux's largest (2^22): no process has it
DEAD_PID = 2**22 + 17


def test_a_second_case_leaves_nothing_of_the_first(tmp_path, capsys, monkeypatch):
    _quick_pictures(monkeypatch)
    out = tmp_path / "out"
    first, second = tmp_path / "first.toml", tmp_path / "second.toml"
    first.write_text(LOSSY_BOX)
    second.write_text(PLAIN_BOX)
    assert main(["solve", str(first), "--out", str(out), "-q"]) == 0
    assert {"wall_loss.vtu", "mode_03.png", "report.html"} <= {p.name for p in out.iterdir()}
    # another command's file in the same folder (femcav mesh writes mesh.msh, and a case
    # may read it back): recorded as the mesh set's, which a solve does not replace
    from femcav.io.atomic import staged_output

    with staged_output(out, kind="mesh") as files:
        files.write_text("mesh.msh", "a mesh")
    (out / "notes.txt").write_text("my own notes")
    assert main(["solve", str(second), "--out", str(out), "-q", "--no-report"]) == 0
    names = {p.name for p in out.iterdir()}
    # the first solve's files that the second did not write again are gone, pictures too
    # (they showed the first case's modes)
    assert not names & {"wall_loss.vtu", "mode_01.png", "mode_03.png", "spectrum.png",
                        "report.html"}
    assert {"modes.json", "fields.vtu", "table.txt", "modes.csv"} <= names
    # what femcav did not write, and another command's files (a case may read mesh.msh
    # back), stay
    assert (out / "notes.txt").read_text() == "my own notes"
    from femcav.io.atomic import MANIFEST

    assert {"mesh.msh", MANIFEST} <= names


def test_showing_one_mode_keeps_the_other_pictures(tmp_path, capsys, monkeypatch):
    _quick_pictures(monkeypatch)
    out = tmp_path / "out"
    case = tmp_path / "case.toml"
    case.write_text(PLAIN_BOX)
    assert main(["solve", str(case), "--out", str(out), "-q"]) == 0
    assert main(["show", str(out), "--mode", "2"]) == 0
    assert {"mode_01.png", "mode_02.png", "report.html"} <= {p.name for p in out.iterdir()}


def test_temporaries_of_killed_runs_are_removed_by_the_next(tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    killed = out / f".fields.vtu.{DEAD_PID}.abcd1234.partial.vtu"
    older = out / ".modes.json.wxyz5678.partial"       # no process id, two hours old
    live = out / f".table.txt.{os.getpid()}.efgh9012.partial"
    users = out / ".draft.partial"                       # not a name femcav makes
    for path in (killed, older, live, users):
        path.write_text("x")
    two_hours_ago = time.time() - 7200
    os.utime(older, (two_hours_ago, two_hours_ago))
    os.utime(users, (two_hours_ago, two_hours_ago))
    case = tmp_path / "case.toml"
    case.write_text(PLAIN_BOX)
    assert main(["solve", str(case), "--out", str(out), "-q", "--no-report"]) == 0
    assert not killed.exists() and not older.exists()
    assert live.exists() and users.exists()     # a running process's, and not ours


def test_a_sweeps_point_folder_is_cleaned_too(tmp_path):
    from femcav.io.atomic import remove_stale_temporaries

    points = tmp_path / "points"
    points.mkdir()
    killed = points / f".003.npz.{DEAD_PID}.abcd1234.partial.npz"
    killed.write_bytes(b"\0" * 100)
    assert remove_stale_temporaries(points) == [killed] and not killed.exists()
