"""Benchmark: a 100-point sweep of a tiny box, in one process, with --jobs 2 and on a local
2-worker Dask cluster.

The case is the made-up Larkspur test box (order 1, 8 mm elements: about 0.1 s a point), so
that the time a point spends outside its own solve shows. Each way runs as the command
line does (``femcav sweep``, a fresh process, into an empty folder) and prints its wall time,
the sum of the points' own solve times (from sweep.json) and the overhead per point:

    overhead per point = (wall time x processes solving - sum of point solve times) / points

that is, the process time a point costs beyond its solve: start-up of the processes (the
workers import femcav, scipy and gmsh), sending points and results, writing the point
files, and the tracking and writing at the end (done once, in the client). The one-minute
load average before each way is printed: on a shared machine the solves themselves slow
down when other work runs.

    OMP_NUM_THREADS=1 python benchmarks/cluster_sweep.py [--points 100]
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

CASE = """
title = "Made-up Larkspur benchmark box (fictional)"
[geometry]
builder = "box"
width = "20 mm"
height = "10 mm"
length = "30 mm"
[mesh]
size = "8 mm"
[solve]
modes = 2
[sweep]
parameter = "geometry.length"
from = "25 mm"
to = "35 mm"
points = POINTS
"""

WAYS = (("one process", [], 1), ("--jobs 2", ["--jobs", "2"], 2),
        ("--cluster local:2", ["--cluster", "local:2"], 2))


def run(folder: Path, extra: list[str]) -> tuple[float, float, int]:
    env = {**os.environ, "PYTHONPATH": str(Path(__file__).resolve().parents[1])}
    for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        env.setdefault(name, "1")
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "femcav", "sweep", str(folder / "box.toml"),
                    "--out", str(folder / "out"), "-q", *extra], env=env, check=True,
                   stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - t0
    document = json.loads((folder / "out" / "sweep.json").read_text())
    return wall, sum(p["seconds"] for p in document["points"]), len(document["points"])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=100)
    args = parser.parse_args()
    print(f"{args.points}-point sweep of a tiny box, OMP_NUM_THREADS="
          f"{os.environ.get('OMP_NUM_THREADS', 'unset')}, {os.cpu_count()} CPUs")
    print(f"{'way':<20} {'wall':>8} {'sum of solves':>14} {'overhead/point':>15}"
          f"  {'load before':>11}")
    for name, extra, processes in WAYS:
        load = os.getloadavg()[0]       # other work on the machine slows every way
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp)
            (folder / "box.toml").write_text(CASE.replace("POINTS", str(args.points)))
            wall, solving, points = run(folder, extra)
        overhead = (wall * processes - solving) / points
        print(f"{name:<20} {wall:7.1f}s {solving:13.1f}s {overhead * 1e3:12.0f} ms"
              f"  {load:11.1f}")


if __name__ == "__main__":
    main()
