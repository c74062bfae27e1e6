"""Studies never give a silent wrong answer, never run away, never end in a traceback and
never reuse a stale point: one test per class of defect (fingerprinted reuse, memory limits
and worker counts, bounds on points, validation before solving, workers dying with their
parent, one run per folder, damaged point files), plus a kill-and-resume run with workers."""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest
from conftest import swept_folder

from femcav.analytic.box import box_modes
from femcav.cli import main
from femcav.errors import InputError
from femcav.study import fingerprint as fp
from femcav.study.folder_lock import folder_lock
from femcav.case_parameters import MAX_VALUES
from femcav.study.point_store import load_point, read_point, save_point
from femcav.case_studies import MAX_GRID_POINTS
from femcav.study.sweep import parse_sweep, plan_points, run_sweep

A, B = 0.02286, 0.01016
LENGTHS = (0.026, 0.028, 0.030)

BOX = """
title = "Made-up Larkspur test cavity"
[geometry]
builder = "box"
width = "22.86 mm"
height = "10.16 mm"
length = "28 mm"
[mesh]
size = "6 mm"
[solve]
modes = 2
order = 2
[sweep]
parameter = "geometry.length"
values = ["26 mm", "28 mm", "30 mm"]
"""


def te101(d: float, eps_r: float = 1.0) -> float:
    # f = (c/2) sqrt((1/a)² + (1/d)²) / sqrt(eps_r) (Pozar, Microwave Engineering, 4th ed.,
    # §6.3, from memory; femcav.analytic.box codes it)
    return box_modes(A, B, d, 20e9, eps_r=eps_r)[0][0]


def first_track(document) -> list[float]:
    return document["tracks"][0]["frequency_hz"]


@pytest.fixture(scope="module")
def solved(tmp_path_factory):
    """A three-point sweep solved once; tests copy its folder."""
    document, out, case = swept_folder(tmp_path_factory.mktemp("solved"), BOX)
    np.testing.assert_allclose(first_track(document), [te101(d) for d in LENGTHS], rtol=3e-3)
    return case, out


def copy_of(solved, tmp_path) -> tuple[Path, Path]:
    case, out = solved
    shutil.copy(case, tmp_path / "box.toml")
    shutil.copytree(out, tmp_path / "out")
    return tmp_path / "box.toml", tmp_path / "out"


# 1. A point is reused only when everything that decides it is the same.

def fingerprints_of(text: str, path: Path) -> list[str]:
    from femcav.case import read_case_data
    path.write_text(text)
    data = read_case_data(path)
    return plan_points(data, path, parse_sweep(data))


@pytest.mark.parametrize("change", [
    ("[solve]\n", "[regions.inside]\neps_r = 4.0\n[solve]\n"),      # a material added
    ('size = "6 mm"', 'size = "5 mm"'),                                # the mesh
    ("modes = 2", "modes = 3"),                                         # the solve options
    ("order = 2", "order = 1"),
    ("[solve]\n", "[walls.x_min]\nkind = \"pmc\"\n[solve]\n"),          # a wall
    ('width = "22.86 mm"', 'width = "22.9 mm"'),                        # another length
])
def test_every_deciding_change_moves_every_fingerprint(tmp_path, change):
    before = fingerprints_of(BOX, tmp_path / "a.toml")
    after = fingerprints_of(BOX.replace(*change), tmp_path / "b.toml")
    assert len(set(before)) == 3
    assert not set(before) & set(after)


def test_what_does_not_decide_a_point_keeps_its_fingerprint(tmp_path):
    before = fingerprints_of(BOX, tmp_path / "a.toml")
    # another title, and the sweep extended: the three old points keep their fingerprints
    after = fingerprints_of(BOX.replace("test cavity", "cavity").replace(
        '"30 mm"]', '"30 mm", "32 mm"]'), tmp_path / "b.toml")
    assert after[:3] == before


def test_results_version_and_mesh_file_contents_are_in_the_fingerprint(tmp_path, monkeypatch):
    mesh = tmp_path / "part.msh"
    mesh.write_text("first version")
    data = {"geometry": {"mesh": "part.msh"}, "solve": {"modes": 2}}
    case = tmp_path / "c.toml"
    first = fp.point_fingerprint(data, case, {})
    assert fp.point_fingerprint(data, case, {}) == first
    mesh.write_text("second version")          # same name, new contents
    second = fp.point_fingerprint(data, case, {})
    assert second != first
    monkeypatch.setattr(fp, "RESULTS_VERSION", fp.RESULTS_VERSION + 1)
    assert fp.point_fingerprint(data, case, {}) != second


def test_a_changed_case_is_solved_again_not_reused(solved, tmp_path, capsys):
    case, out = copy_of(solved, tmp_path)
    case.write_text(BOX.replace("[solve]\n", "[regions.inside]\neps_r = 4.0\n[solve]\n")
                    .replace('size = "6 mm"', 'size = "5.5 mm"').replace("modes = 2",
                                                                          "modes = 1"))
    document, _ = run_sweep(case, out=out)
    # filled with eps_r = 4 every frequency halves (same formula)
    np.testing.assert_allclose(first_track(document), [te101(d, 4.0) for d in LENGTHS],
                               rtol=3e-3)
    assert "3 of 3 points" in capsys.readouterr().err


def test_points_from_an_older_femcav_are_solved_again(solved, tmp_path, capsys):
    case, out = copy_of(solved, tmp_path)
    for summary in (out / "points").glob("*.json"):
        document = json.loads(summary.read_text())
        del document["fingerprint"]            # as written before fingerprints existed
        summary.write_text(json.dumps(document))
    run_sweep(case, out=out)
    assert "3 of 3 points" in capsys.readouterr().err


# 6. Memory: the tightest limit, shared among the workers; MemoryError as one line.

def test_address_space_limit_bounds_the_free_memory():
    # ulimit -v of 1 GB above what the process already maps: at most that is free
    script = ("import resource\n"
              "from femcav import memory_room as memory\n"
              "status = dict(l.split(':', 1) for l in open('/proc/self/status'))\n"
              "used = int(status['VmSize'].split()[0]) * 1024\n"
              "resource.setrlimit(resource.RLIMIT_AS, (used + 10**9, resource.RLIM_INFINITY))\n"
              "print(memory.available_bytes())\n")
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          env={**os.environ, "PYTHONPATH": str(Path(__file__).parents[1])},
                          timeout=60)
    assert done.returncode == 0, done.stderr
    assert 0 < int(done.stdout) <= 10**9


@pytest.mark.parametrize("version", ["v1", "v2"])
def test_control_group_limit_counts_with_its_parents(tmp_path, version):
    from femcav.memory_room import cgroup_room
    if version == "v2":
        proc, root, names = "0::/outer/inner\n", tmp_path, ("memory.max", "memory.current")
    else:
        proc, root, names = "4:memory:/outer/inner\n", tmp_path, (
            "memory.limit_in_bytes", "memory.usage_in_bytes")
    base = tmp_path / ("memory" if version == "v1" else "")
    for folder, limit, used in ((base / "outer", 8 * 2**30, 5 * 2**30),     # 3 GiB left
                                (base / "outer" / "inner", 16 * 2**30, 1 * 2**30)):
        folder.mkdir(parents=True)
        (folder / names[0]).write_text(f"{limit}\n")
        (folder / names[1]).write_text(f"{used}\n")
    assert cgroup_room(proc, root) == 3 * 2**30
    (base / "outer" / names[0]).write_text("max\n" if version == "v2"
                                           else "9223372036854771712\n")
    assert cgroup_room(proc, root) == 15 * 2**30


def test_workers_share_the_memory_and_jobs_are_capped(monkeypatch):
    from femcav import memory_room as memory
    from femcav.study import workers
    monkeypatch.setattr(memory, "_sharing_processes", 1)
    monkeypatch.setattr(memory, "shared_room", lambda: 8e9)
    monkeypatch.setattr(memory, "process_room", lambda: None)
    alone = memory.available_bytes()
    memory.share_memory_among(4)
    assert memory.available_bytes() == pytest.approx(alone / 4)
    monkeypatch.setattr(workers, "cpu_count", lambda: 2)
    assert workers.usable_jobs(64, 12, None)[0] == 2                 # the cores
    jobs, why = workers.usable_jobs(64, 12, 2e9, shared_bytes=8e9)   # 3.3 GB a worker
    assert jobs == 2 and why
    jobs, why = workers.usable_jobs(64, 12, 3e9, shared_bytes=8e9)   # 4.8 GB a worker
    assert jobs == 1 and "fit" in why
    assert workers.usable_jobs(2, 1, None) == (1, None)               # one point left


def test_a_worker_sees_its_share_of_the_memory():
    from femcav import memory_room as memory
    from femcav.study.workers import worker_pool
    with worker_pool(3) as pool:
        share = pool.submit(memory.available_bytes).result(timeout=120)
    assert share <= memory.shared_room() / 3 * 1.1


def _process_id_after_a_pause(seconds: float) -> int:
    time.sleep(seconds)
    return os.getpid()


def test_the_pool_starts_the_workers_asked_for():
    # one more than the cores: the pool itself must not cap the count (usable_jobs does)
    from femcav.study.workers import cpu_count, worker_pool
    jobs = cpu_count() + 1
    with worker_pool(jobs) as pool:
        futures = [pool.submit(_process_id_after_a_pause, 1.0) for _ in range(jobs)]
        workers = {f.result(timeout=120) for f in futures}
    assert len(workers) == jobs and os.getpid() not in workers


@pytest.mark.parametrize("error", [MemoryError("Unable to allocate 7.45 GiB"), MemoryError()])
def test_memory_error_is_one_line_and_status_4(monkeypatch, capsys, tmp_path, error):
    import femcav.study.sweep as sweep

    def run_out_of_memory(*args, **kwargs):
        raise error
    monkeypatch.setattr(sweep, "run_sweep", run_out_of_memory)
    (tmp_path / "box.toml").write_text(BOX)
    assert main(["sweep", str(tmp_path / "box.toml"), "-q"]) == 4
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "out of memory" in err and "Traceback" not in err


# 7. Bounds on the number of points, checked before any list of values is made.

@pytest.mark.parametrize("sweep, field", [
    ('parameter = "geometry.length"\nfrom = "20 mm"\nto = "30 mm"\npoints = 1000000000',
     "sweep.points"),
    ('parameter = "geometry.length"\nvalues = [' + ", ".join(
        f'"{20 + i * 1e-4:.4f} mm"' for i in range(MAX_VALUES + 1)) + "]", "sweep.values"),
    ('parameter = "geometry.length"\nfrom = "20 mm"\nto = "30 mm"\npoints = 400\n'
     '[sweep.second]\nparameter = "geometry.width"\nfrom = "20 mm"\nto = "30 mm"\n'
     f'points = {MAX_GRID_POINTS // 400 + 1}', "sweep.second"),
])
def test_too_many_points_are_refused_before_anything(tmp_path, sweep, field):
    import tomllib
    data = tomllib.loads(BOX.split("[sweep]")[0] + "[sweep]\n" + sweep + "\n")
    # (without the bound, points = 1000000000 allocates 7.45 GiB before anything is said)
    with pytest.raises(InputError, match="at most|from 2 to") as caught:
        parse_sweep(data)
    assert caught.value.field == field


# 12. Every point is validated before any is solved or written.

@pytest.mark.parametrize("sweep, message", [
    ('parameter = "regions.inside.eps_r"\nvalues = [1.0, -1.0]', "sweep.values[1]"),
    ('parameter = "geometry.length"\nvalues = ["28 mm", "-3 mm"]', "sweep.values[1]"),
])
def test_a_bad_point_anywhere_stops_the_sweep_before_it_starts(tmp_path, capsys, sweep,
                                                                message):
    case = tmp_path / "box.toml"
    case.write_text(BOX.split("[sweep]")[0] + "[sweep]\n" + sweep + "\n")
    assert main(["sweep", str(case), "--out", str(tmp_path / "out"), "-q"]) == 2
    assert message in capsys.readouterr().err
    assert not (tmp_path / "out").exists()


def test_tune_refuses_a_bad_bracket_end_before_solving(tmp_path, monkeypatch):
    import femcav.runner
    from femcav.study.tune import run_tune

    def no_solve(*args, **kwargs):
        raise AssertionError("solved before the bracket was checked")
    monkeypatch.setattr(femcav.runner, "solve_case", no_solve)
    case = tmp_path / "tune.toml"
    case.write_text(BOX.split("[sweep]")[0] + '[tune]\nparameter = "geometry.length"\n'
                    'bracket = ["-5 mm", "30 mm"]\ntarget = "8.5 GHz"\n')
    with pytest.raises(InputError, match=r"tune\.bracket\[0\]"):
        run_tune(case, out=tmp_path / "out")
    assert not (tmp_path / "out").exists()


# 16. One run per folder; temporary files never shared.

def test_a_second_run_in_a_held_folder_names_the_holder(tmp_path, capsys):
    case = tmp_path / "box.toml"
    case.write_text(BOX)
    with folder_lock(tmp_path / "out"):
        assert main(["sweep", str(case), "--out", str(tmp_path / "out"), "-q"]) == 2
    err = capsys.readouterr().err
    assert f"process {os.getpid()}" in err and err.count("\n") == 1
    assert not (tmp_path / "out" / "points").exists()


def test_writers_of_one_point_never_share_a_temporary_file(solved, tmp_path):
    _, out = solved
    point = read_point(out, 0)
    errors = []

    def write_many():
        try:
            for _ in range(10):
                save_point(tmp_path, 0, point)
        except Exception as exc:  # noqa: BLE001 - any failure is the finding
            errors.append(exc)
    threads = [threading.Thread(target=write_many) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    assert load_point(tmp_path, 0, point.fingerprint)[1] == "reused"
    assert sorted(p.name for p in (tmp_path / "points").iterdir()) == ["000.json", "000.npz"]


# 17. A point file that cannot be read is solved again, with a warning.

@pytest.mark.parametrize("damage", ["cut json", "cut npz", "garbage json", "no npz",
                                    "npz of another point"])
def test_a_damaged_point_is_solved_again(solved, tmp_path, capsys, damage):
    case, out = copy_of(solved, tmp_path)
    points = out / "points"
    expected = json.loads((out / "sweep.json").read_text())
    summary, arrays = points / "001.json", points / "001.npz"
    if damage == "cut json":
        summary.write_bytes(summary.read_bytes()[:200])
    elif damage == "cut npz":
        arrays.write_bytes(arrays.read_bytes()[:1000])
    elif damage == "garbage json":
        summary.write_text("[1, 2, 3]")
    elif damage == "no npz":
        arrays.unlink()
    else:
        shutil.copy(points / "002.npz", arrays)
    stamp = (points / "000.json").stat().st_mtime_ns
    document, _ = run_sweep(case, out=out)
    err = capsys.readouterr().err
    assert "cannot be read" in err and "point 2" in err
    # the file and what is wrong with it (the standard library's exception names)
    said = {"cut json": "001.json: JSONDecodeError: ", "garbage json": "001.json: not a point "
            "summary", "no npz": "001.npz: FileNotFoundError: "}.get(damage, "001.npz: ")
    assert said in err, err
    assert (points / "000.json").stat().st_mtime_ns == stamp          # the others reused
    np.testing.assert_allclose(first_track(document), first_track(expected), rtol=1e-6)


# 15. Workers end with their parent; kill and resume.

def worker_pids(parent: int) -> set[int]:
    pids = set()
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
                cmdline = (entry / "cmdline").read_bytes()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == parent and b"spawn_main" in cmdline:
                pids.add(int(entry.name))
    return pids


def alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state not in ("Z", "X")          # a zombie has ended; only its entry is left


@pytest.mark.skipif(not sys.platform.startswith("linux") or len(os.sched_getaffinity(0)) < 2,
                    reason="reads /proc; needs two cores for two workers")
@pytest.mark.parametrize("sig, resume", [(signal.SIGKILL, True), (signal.SIGTERM, False)],
                         ids=["SIGKILL, then resume", "SIGTERM"])
def test_killed_sweep_takes_its_workers_and_resumes(tmp_path, sig, resume):
    lengths = [f"{26 + k} mm" for k in range(6)]
    case = tmp_path / "box.toml"
    case.write_text(BOX.replace('values = ["26 mm", "28 mm", "30 mm"]',
                                "values = [" + ", ".join(f'"{v}"' for v in lengths) + "]"))
    out = tmp_path / "out"
    env = {**os.environ, "PYTHONPATH": str(Path(__file__).parents[1]),
           "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}
    command = [sys.executable, "-m", "femcav", "sweep", str(case), "--out", str(out),
               "--jobs", "2", "-q"]
    parent = subprocess.Popen(command, env=env, stderr=subprocess.PIPE)
    workers, deadline = set(), time.monotonic() + 120
    while time.monotonic() < deadline and parent.poll() is None:
        workers |= worker_pids(parent.pid)
        if len(workers) == 2:
            break
        time.sleep(0.05)
    assert len(workers) == 2, "the sweep did not start its two workers"
    parent.send_signal(sig)
    parent.wait(timeout=30)
    deadline = time.monotonic() + 10
    while time.monotonic() < deadline and any(alive(p) for p in workers):
        time.sleep(0.1)
    assert not any(alive(p) for p in workers), "a worker outlived its parent"
    parent.stderr.close()
    kept = len(list((out / "points").glob("*.json")))
    assert kept >= 1                       # the parent solved the first point itself
    time.sleep(1.5)                        # nothing writes points any more
    assert len(list((out / "points").glob("*.json"))) == kept
    if not resume:
        return
    resumed = subprocess.run(command[:-3], env=env, capture_output=True, text=True,
                             timeout=300)       # in one process: no time spent on workers
    assert resumed.returncode == 0, resumed.stderr
    assert f"6 points, {kept} already solved" in resumed.stderr      # valid points reused
    assert "Traceback" not in resumed.stderr
    document = json.loads((out / "sweep.json").read_text())
    np.testing.assert_allclose(first_track(document),
                               [te101(0.026 + 0.001 * k) for k in range(6)], rtol=3e-3)
    assert not list((out / "points").glob(".*")) + list(out.glob(".*.partial*"))  # no
    # temporary file left behind
