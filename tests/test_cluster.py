"""Sweeps on a Dask cluster: the same points as a serial run, a worker or the client lost
mid-run, a point that fails, and Dask left alone without --cluster.

The cluster is a Dask scheduler and two workers started here as separate processes (the
`dask scheduler` / `dask worker` programs run as modules), on 127.0.0.1 only, stopped in the
fixture's teardown. The workers run without a nanny, so a killed worker stays dead."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

distributed = pytest.importorskip("distributed")

from femcav.cli import main  # noqa: E402
from femcav.errors import InputError  # noqa: E402
from femcav.progress import Progress  # noqa: E402
from femcav.study import sweep as sweep_module  # noqa: E402
from femcav.study.cluster import parse_cluster_address  # noqa: E402
from femcav.study.sweep import run_sweep  # noqa: E402
from test_study_hardening import BOX, A, te101  # noqa: E402 - the same box, its TE101

CHECKOUT = Path(__file__).resolve().parents[1]
ENV = {**os.environ, "PYTHONPATH": str(CHECKOUT), "OMP_NUM_THREADS": "1",
       "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}
START_TIMEOUT = 60          # s: a loaded two-core machine starts Python slowly


def box_case(folder: Path, lengths_mm) -> Path:
    """The made-up box of the study tests, swept over ``lengths_mm``."""
    case = folder / "box.toml"
    case.write_text(BOX.replace('values = ["26 mm", "28 mm", "30 mm"]', "values = [" + ", ".join(
        f'"{v} mm"' for v in lengths_mm) + "]"))
    return case


def frequencies(document) -> np.ndarray:
    return np.array([[m["frequency_hz"] for m in p["modes"]] for p in document["points"]])


class LoopbackCluster:
    """A scheduler and two workers, each its own process, on 127.0.0.1."""

    def __init__(self, folder: Path):
        self.file = folder / "scheduler.json"
        quiet = {"stdout": subprocess.DEVNULL, "stderr": subprocess.DEVNULL, "env": ENV}
        self.scheduler = subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_scheduler", "--host", "127.0.0.1",
             "--port", "0", "--no-dashboard", "--scheduler-file", str(self.file)], **quiet)
        self.workers = [subprocess.Popen(
            [sys.executable, "-m", "distributed.cli.dask_worker", "--scheduler-file",
             str(self.file), "--nthreads", "1", "--no-nanny", "--no-dashboard", "--host",
             "127.0.0.1"], **quiet) for _ in range(2)]
        try:
            self.address = self._read_address()
            with distributed.Client(self.address, timeout="30s") as client:
                client.wait_for_workers(2, timeout=START_TIMEOUT)
        except BaseException:
            self.stop()             # no process outlives a start that failed
            raise

    def _read_address(self) -> str:
        deadline = time.monotonic() + START_TIMEOUT
        while time.monotonic() < deadline:
            try:
                return json.loads(self.file.read_text())["address"]
            except (OSError, ValueError, KeyError):
                time.sleep(0.05)
        raise TimeoutError("the scheduler did not start")

    def stop(self) -> None:
        for process in [*self.workers, self.scheduler]:
            if process.poll() is None:
                process.terminate()
        for process in [*self.workers, self.scheduler]:
            try:
                process.wait(timeout=15)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait(timeout=15)


@pytest.fixture(scope="module")
def cluster(tmp_path_factory):
    started = None
    try:
        started = LoopbackCluster(tmp_path_factory.mktemp("cluster"))
        yield started
    finally:
        if started is not None:
            started.stop()


@pytest.fixture(scope="module")
def serial(tmp_path_factory):
    """A plain sweep in a fresh interpreter: its results, and the Dask modules it loaded."""
    folder = tmp_path_factory.mktemp("serial")
    case = box_case(folder, [26, 30])
    script = ("import json, sys\nfrom femcav.study.sweep import run_sweep\n"
              f"run_sweep({str(case)!r}, out={str(folder / 'out')!r})\n"
              "print(json.dumps(sorted(m for m in sys.modules "
              "if m.split('.')[0] in ('dask', 'distributed'))))\n")
    done = subprocess.run([sys.executable, "-c", script], env=ENV, capture_output=True,
                          text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    document = json.loads((folder / "out" / "sweep.json").read_text())
    return document, json.loads(done.stdout.strip().splitlines()[-1])


def test_a_plain_sweep_does_not_import_dask(serial):
    _, loaded = serial
    assert loaded == []


@pytest.mark.parametrize("address", ["local", "local:0", "local:x", "8786", "host:8786",
                                     "http://host:8786", "tcp://"])
def test_bad_cluster_addresses_are_input_errors(address):
    with pytest.raises(InputError) as caught:
        parse_cluster_address(address)
    assert caught.value.field == "--cluster"


def test_jobs_and_cluster_together_are_refused_before_anything(tmp_path):
    case = box_case(tmp_path, [26, 28])
    with pytest.raises(InputError) as caught:
        run_sweep(case, out=tmp_path / "out", jobs=2, cluster="local:2")
    assert caught.value.field == "--cluster"
    assert not (tmp_path / "out").exists()


def test_a_scheduler_that_does_not_answer_is_one_line(tmp_path, capsys, monkeypatch):
    from femcav.study import cluster as cluster_module
    monkeypatch.setattr(cluster_module, "CONNECT_TIMEOUT", "1s")
    case = box_case(tmp_path, [26, 28])
    # port 9 (discard) on loopback: nothing listens there in a test sandbox (common practice)
    status = main(["sweep", str(case), "--cluster", "tcp://127.0.0.1:9", "-q"])
    assert status == 2
    assert "no Dask scheduler answered" in capsys.readouterr().err


class Terminal:
    """A stderr that says it is a terminal, and keeps what is written to it."""

    def __init__(self):
        self.text = ""

    def write(self, text: str) -> int:
        self.text += text
        return len(text)

    def flush(self) -> None:
        pass

    def isatty(self) -> bool:
        return True


def test_cluster_sweep_equals_the_serial_one(cluster, serial, tmp_path):
    expected, _ = serial
    case = box_case(tmp_path, [26, 30])
    terminal = Terminal()
    document, _ = run_sweep(case, out=tmp_path / "out", cluster=cluster.address,
                            progress=Progress(stream=terminal))
    assert document["failed_points"] == []
    # on a terminal, progress is one bar redrawn in place, once a point
    bars = [b for b in terminal.text.split("\r") if b.startswith("\x1b[K[")]
    assert len(bars) == 2
    assert bars[0].startswith("\x1b[K[" + "#" * 15 + "." * 15 + "] 1 done")
    assert bars[1].startswith("\x1b[K[" + "#" * 30 + "] 2 done, 0 running, 0 failed")
    # same meshes, same solver, another process: the same numbers
    np.testing.assert_allclose(frequencies(document), frequencies(expected), rtol=1e-12,
                               atol=0)
    assert [p["values"] for p in document["points"]] == [p["values"] for p in
                                                         expected["points"]]


def test_a_point_that_fails_on_a_worker_is_listed_and_the_rest_go_on(cluster, tmp_path,
                                                                     monkeypatch, capsys):
    # The worker checks each point's fingerprint against its own: a client that sends a
    # wrong one for point 2 gets that point refused there, as a bad mesh would be.
    real = sweep_module.plan_points

    def one_wrong(*args):
        prints = real(*args)
        return [prints[0], "0" * 64, *prints[2:]]

    monkeypatch.setattr(sweep_module, "plan_points", one_wrong)
    case = box_case(tmp_path, [26, 28, 30])
    status = main(["sweep", str(case), "--out", str(tmp_path / "out"), "--cluster",
                   cluster.address, "-q"])
    captured = capsys.readouterr()
    assert status == 3
    assert "point 2 FAILED" in captured.out and "fingerprint" in captured.out
    document = json.loads((tmp_path / "out" / "sweep.json").read_text())
    assert [f["index"] for f in document["failed_points"]] == [1 + 1]
    assert document["points"][1]["failed"] is True
    track = document["tracks"][0]["frequency_hz"]
    assert track[1] is None
    np.testing.assert_allclose([track[0], track[2]], [te101(0.026), te101(0.030)], rtol=3e-3)
    assert not (tmp_path / "out" / "points" / "001.json").exists()


class KillOneWorker(Progress):
    """Progress lines that kill a busy worker as soon as the first point comes back."""

    def __init__(self, cluster: LoopbackCluster):
        super().__init__(quiet=True)
        self.cluster, self.killed = cluster, None

    def step(self, message: str) -> None:
        if self.killed is None and " solved: " in message:
            with distributed.Client(self.cluster.address, timeout="10s") as client:
                busy = [w for w, keys in client.processing().items() if keys]
                pids = client.run(os.getpid, workers=busy[:1])
            self.killed = next(iter(pids.values()))
            os.kill(self.killed, signal.SIGKILL)


def test_a_worker_killed_mid_sweep_loses_nothing(cluster, tmp_path, monkeypatch):
    if sum(w.poll() is None for w in cluster.workers) < 2:
        pytest.skip("needs the fixture's two workers")
    saved = []
    real_save = sweep_module.save_point
    monkeypatch.setattr(sweep_module, "save_point",
                        lambda folder, index, point: (saved.append(index),
                                                      real_save(folder, index, point)))
    lengths = [25, 26, 27, 28, 29, 30]
    case = box_case(tmp_path, lengths)
    progress = KillOneWorker(cluster)
    document, folder = run_sweep(case, out=tmp_path / "out", cluster=cluster.address,
                                 progress=progress)
    assert progress.killed in [w.pid for w in cluster.workers]
    assert document["failed_points"] == []
    assert sorted(saved) == list(range(len(lengths)))       # each point once, none lost
    np.testing.assert_allclose(document["tracks"][0]["frequency_hz"],
                               [te101(v * 1e-3) for v in lengths], rtol=3e-3)
    assert not [p for p in (folder / "points").iterdir() if p.name.startswith(".")]


@pytest.mark.slow        # 7 s: a second client process; resuming itself is the --jobs path's
def test_a_client_killed_mid_run_resumes(cluster, tmp_path):
    lengths = [25, 26, 27, 28, 29, 30]
    case = box_case(tmp_path, lengths)
    out = tmp_path / "out"
    command = [sys.executable, "-m", "femcav", "sweep", str(case), "--out", str(out),
               "--cluster", cluster.address, "-q"]
    client = subprocess.Popen(command, env=ENV, stdout=subprocess.DEVNULL,
                              stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + START_TIMEOUT
        while time.monotonic() < deadline and client.poll() is None and not list(
                out.glob("points/*.json")):
            time.sleep(0.02)
        client.send_signal(signal.SIGKILL)
        client.wait(timeout=30)
    finally:
        if client.poll() is None:
            client.kill()
    kept = len(list(out.glob("points/*.json")))
    assert 1 <= kept < len(lengths)
    messages = []
    record = Progress(quiet=True)
    record.step = messages.append
    document, _ = run_sweep(case, out=out, cluster=cluster.address, progress=record)
    assert any(f"{len(lengths)} points, {kept} already solved" in m for m in messages)
    np.testing.assert_allclose(document["tracks"][0]["frequency_hz"],
                               [te101(v * 1e-3) for v in lengths], rtol=3e-3)


@pytest.mark.slow        # 10 to 20 s: about eight solves and a final one on three meshes
def test_tune_on_the_cluster_inverts_the_te101_formula(cluster, tmp_path):
    from femcav.study.tune import run_tune

    case = tmp_path / "tune.toml"
    case.write_text(BOX.split("[sweep]")[0] + '[tune]\nparameter = "geometry.length"\n'
                    'bracket = ["26 mm", "30 mm"]\ntarget = "8.3 GHz"\ntolerance = 1e-3\n')
    messages = []
    record = Progress(quiet=True)
    record.step = messages.append
    document, _ = run_tune(case, out=tmp_path / "out", cluster=cluster.address,
                           progress=record)
    assert any(m.startswith(f"cluster {cluster.address}: ") for m in messages)
    # TE101: (2f/c)² = 1/a² + 1/d², so d = 1 / sqrt((2f/c)² - 1/a²) (Pozar, Microwave
    # Engineering, 4th ed., §6.3, from memory). A relative error e in f moves d by
    # e (1/a² + 1/d²) / (1/d²) < 3 e here; e is within the root finder's tolerance plus the
    # final error bar, doubled as in tests/test_tune.py.
    from scipy.constants import c
    exact = 1 / np.sqrt((2 * 8.3e9 / c) ** 2 - 1 / A ** 2)
    e = 2 * document["error_estimate_hz"] / 8.3e9 + 1e-3
    assert abs(document["value"] / exact - 1) <= 3 * e
    assert te101(exact) == pytest.approx(8.3e9, rel=1e-12)


# Monte-Carlo tolerances: a pillbox's radius (normal) and length (uniform), solved on its
# meridional section (ppb-accurate, so the spread is the tolerances' and not the mesh's).

PILLBOX = """
title = "Made-up Larkspur pillbox, Monte-Carlo tolerances"
[solve]
modes = 2
azimuthal_orders = [0]
[geometry]
builder = "pillbox"
length = "15 mm"
radius = "10 mm"
[mesh]
size = "2.5 mm"
[tolerances]
samples = SAMPLES
seed = 2026
radius = "20 um"
length = { tolerance = "30 um", distribution = "uniform" }
"""
SIGMA_RADIUS = 20e-6                        # normal: the tolerance is one standard deviation
SIGMA_LENGTH = 30e-6 / np.sqrt(3)           # uniform on ± 30 µm (common practice)


def tm01p(a: float, d: float, p: int) -> tuple[float, float, float]:
    """TM01p of a pillbox and its derivatives in radius and length: f = (c/2π)
    sqrt((p01/a)² + (pπ/d)²) (Pozar, Microwave Engineering, 4th ed., §6.3, from memory;
    TM010: f = c p01 / (2π a)); p01 from scipy.special."""
    from scipy.constants import c
    from scipy.special import jn_zeros
    k = c / (2 * np.pi)
    x = jn_zeros(0, 1)[0]
    f = k * np.hypot(x / a, p * np.pi / d)
    return f, -k * k * x * x / a ** 3 / f, -k * k * (p * np.pi) ** 2 / d ** 3 / f


def check_spread(document, samples: int, std_tolerance: float, draws=None) -> None:
    a, d = 0.010, 0.015
    for p in (0, 1):                                    # TM010, TM011
        f, df_da, df_dd = tm01p(a, d, p)
        mode = min(document["modes"], key=lambda m: abs(m["frequency_hz"] - f))
        assert mode["frequency_hz"] == pytest.approx(f, rel=1e-6)
        spread = mode["tolerance"]["monte_carlo"]
        linear = np.hypot(df_da * SIGMA_RADIUS, df_dd * SIGMA_LENGTH)
        assert spread["samples"] == samples and spread["samples_failed"] == 0
        # the sample standard deviation is within a few of its standard errors,
        # σ / sqrt(2 (n - 1)) for a normal sample (common practice), of the linear one
        assert abs(spread["std_hz"] / linear - 1) < std_tolerance
        # the mean within four standard errors of the nominal (the curvature of f(a) moves
        # it by f (σ/a)² = 4e-6 f, far less)
        assert abs(spread["mean_hz"] - f) < 4 * linear / np.sqrt(samples)
        assert spread["p01_hz"] < spread["mean_hz"] < spread["p99_hz"]
        if draws is not None:
            # On the very lengths drawn, the sampling error cancels: the closed form gives
            # the mean to the solver's accuracy, the linearised one the spread to the
            # curvature's share, (σ/a) ≈ 2e-3.
            a_k = np.array([x["radius"] for x in draws])
            d_k = np.array([x["length"] for x in draws])
            exact = tm01p(a_k, d_k, p)[0]
            assert spread["mean_hz"] == pytest.approx(exact.mean(), rel=1e-6)
            lin = f + df_da * (a_k - a) + df_dd * (d_k - d)
            assert spread["std_hz"] == pytest.approx(lin.std(ddof=1), rel=1e-2)
            assert spread["p01_hz"] == pytest.approx(np.percentile(exact, 1), rel=1e-6)
            assert spread["p99_hz"] == pytest.approx(np.percentile(exact, 99), rel=1e-6)
        if samples >= 400 and p == 0:
            # 1st to 99th percentile of a normal spread: 2 × 2.326 σ (TM010 is normal here:
            # only the radius moves it); standard error about 6 % at 400 samples
            assert (spread["p99_hz"] - spread["p01_hz"]) / (2 * 2.326 * linear) == \
                pytest.approx(1, abs=0.25)


def drawn(samples: int):
    from femcav.study.monte_carlo import MonteCarloSpec, draw
    spec = MonteCarloSpec(samples=samples, seed=2026,
                          tolerances={"radius": 20e-6, "length": 30e-6},
                          distributions={"radius": "normal", "length": "uniform"})
    return draw(spec, {"radius": 0.010, "length": 0.015})


def test_draws_follow_their_distributions():
    draws = drawn(100_000)
    radius = np.array([x["radius"] for x in draws]) - 0.010
    length = np.array([x["length"] for x in draws]) - 0.015
    # standard errors at 1e5 draws: 0.3 % of σ for the mean, 0.2 % for σ (common practice)
    assert abs(radius.mean()) < 0.02 * SIGMA_RADIUS
    assert radius.std() == pytest.approx(SIGMA_RADIUS, rel=0.01)
    assert np.abs(length).max() <= 30e-6 and np.abs(length).max() > 29.9e-6
    assert length.std() == pytest.approx(SIGMA_LENGTH, rel=0.01)
    assert abs(np.corrcoef(radius, length)[0, 1]) < 0.02        # drawn independently
    assert drawn(5) == drawn(5)                                  # the seed decides


def test_monte_carlo_matches_the_bessel_derivatives(tmp_path):
    case = tmp_path / "pillbox.toml"
    case.write_text(PILLBOX.replace("SAMPLES", "20"))
    status = main(["solve", str(case), "--out", str(tmp_path / "out"), "--no-report", "-q"])
    assert status == 0
    document = json.loads((tmp_path / "out" / "modes.json").read_text())
    check_spread(document, 20, std_tolerance=4 / np.sqrt(2 * 19), draws=drawn(20))
    assert "Monte-Carlo spread over 20 samples" in (tmp_path / "out" / "table.txt").read_text()


@pytest.mark.slow        # 400 samples on a local two-worker cluster: a minute or more
def test_monte_carlo_on_a_local_cluster_matches_the_bessel_derivatives_closely(tmp_path):
    case = tmp_path / "pillbox.toml"
    case.write_text(PILLBOX.replace("SAMPLES", "400"))
    assert main(["solve", str(case), "--out", str(tmp_path / "out"), "--no-report", "-q",
                 "--cluster", "local:2"]) == 0
    document = json.loads((tmp_path / "out" / "modes.json").read_text())
    check_spread(document, 400, std_tolerance=4 / np.sqrt(2 * 399), draws=drawn(400))


@pytest.mark.parametrize("table, field", [
    ('samples = 1\nradius = "20 um"', "tolerances.samples"),
    ('samples = 10', "tolerances.samples"),
    ('samples = 10\nradius = { tolerance = "20 um", distribution = "flat" }',
     "tolerances.radius.distribution"),
    ('samples = 10\nradius = { distribution = "normal" }', "tolerances.radius"),
])
def test_bad_monte_carlo_tables_are_input_errors(tmp_path, table, field):
    from femcav.case import load_case
    case = tmp_path / "pillbox.toml"
    case.write_text(PILLBOX.split("[tolerances]")[0] + "[tolerances]\n" + table + "\n")
    with pytest.raises(InputError) as caught:
        load_case(case)
    assert caught.value.field == field


def test_solve_cluster_without_samples_is_refused(tmp_path, capsys):
    case = tmp_path / "pillbox.toml"
    case.write_text(PILLBOX.split("[tolerances]")[0])
    assert main(["solve", str(case), "--cluster", "local:2", "-q"]) == 2
    assert "Monte-Carlo" in capsys.readouterr().err
    assert not (tmp_path / "pillbox-results").exists()


def test_tolerance_derivatives_on_the_cluster_equal_the_local_ones(cluster, tmp_path):
    # The same morphed meshes solved in another process: the same frequencies to round-off
    # (a few 1e-16 were seen: the sparse solver's sums may run in another order there),
    # which the difference quotient over 2δ = 6e-5 of the part multiplies by about 1e4:
    # 1e-9 on the derivative is 1e-13 on the frequencies. (The derivatives' accuracy
    # against the closed forms is tests/test_morph.py's.)
    from femcav.case import load_case
    from femcav.runner import solve_case
    from femcav.study.cluster import optional_cluster_pool

    path = tmp_path / "box.toml"
    path.write_text(BOX.split("[sweep]")[0] + '[tolerances]\nlength = "20 um"\n')
    case = load_case(path)
    local = solve_case(case, case.solve)
    messages = []
    record = Progress(quiet=True)
    record.step = messages.append
    with optional_cluster_pool(cluster.address, record) as pool:
        remote = solve_case(case, case.solve, pool=pool)
    assert any(m.startswith(f"cluster {cluster.address}: ") for m in messages)
    for a, b in zip(local.modes, remote.modes):
        assert b.tolerance.df_dp_hz_per_m["length"] == pytest.approx(
            a.tolerance.df_dp_hz_per_m["length"], rel=1e-9, abs=0)
    # TE101 falls as the box grows (df/dd = -(c/2)² / (d³ f), Pozar §6.3, from memory)
    assert local.modes[0].tolerance.df_dp_hz_per_m["length"] < 0


@pytest.mark.slow        # a scheduler and workers of its own: 10 s
def test_a_lost_scheduler_is_one_line_and_keeps_the_points(tmp_path):
    own = LoopbackCluster(tmp_path)
    try:
        case = box_case(tmp_path, [25, 26, 27, 28, 29, 30])
        out = tmp_path / "out"
        client = subprocess.Popen([sys.executable, "-m", "femcav", "sweep", str(case),
                                   "--out", str(out), "--cluster", own.address, "-q"],
                                  env=ENV, stderr=subprocess.PIPE, text=True)
        deadline = time.monotonic() + START_TIMEOUT
        while time.monotonic() < deadline and client.poll() is None and not list(
                out.glob("points/*.json")):
            time.sleep(0.02)
        own.scheduler.kill()
        _, err = client.communicate(timeout=120)
    finally:
        own.stop()
    assert client.returncode == 4
    assert err.strip().splitlines() == [err.strip()] and "scheduler was lost" in err
    assert list(out.glob("points/*.json"))            # what was solved stays
    assert not (out / "sweep.json").exists()


def test_error_bars_on_the_cluster_equal_the_local_ones(cluster, tmp_path):
    # The three meshes of an error estimate, solved at once on the cluster's workers: the
    # same meshes and solves as here, so the same frequencies and bars to round-off, and
    # the bars hold the closed form (TE101 = (c/2) sqrt(1/a² + 1/d²), Pozar §6.3).
    from femcav.case import load_case
    from femcav.runner import solve_case
    from femcav.study.cluster import optional_cluster_pool

    path = tmp_path / "box.toml"
    path.write_text(BOX.split("[sweep]")[0].replace("[solve]", "[solve]\nerror_estimate = true"))
    case = load_case(path)
    local = solve_case(case, case.solve)
    with optional_cluster_pool(cluster.address, Progress(quiet=True)) as pool:
        remote = solve_case(case, case.solve, pool=pool)
    assert len(remote.modes) == len(local.modes)
    for a, b in zip(local.modes, remote.modes):
        assert b.frequency_hz == pytest.approx(a.frequency_hz, rel=1e-12)
        assert b.error_estimate_hz == pytest.approx(a.error_estimate_hz, rel=1e-6)
    assert abs(remote.modes[0].frequency_hz - te101(0.028)) <= remote.modes[0].error_estimate_hz
