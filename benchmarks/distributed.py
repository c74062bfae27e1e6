"""Benchmark: the distributed backend (SLEPc + MUMPS over MPI) on 1 and 2 processes.

The box of the tests (22.86 x 10.16 x 30 mm, a made-up Larkspur Microwave Works part),
order 1, the 10 lowest modes, meshed once per size into a .msh file so that every run
solves the same mesh. For each size and process count: wall time of the assembly and of the
eigen solve (the slowest process), peak resident memory of each process, and the largest
relative difference from the serial direct solve of the same mesh (run once per size, in
this process's environment, up to --serial-max-dofs; above that the first process count's
run is the reference). One thread per process (OMP_NUM_THREADS=1 and the BLAS ones), so
that 2 processes use 2 cores. The parallel efficiency of N processes is t_1 / (N t_N), t the
total solve time of the slowest process, against the same size's first process count. The
machine may be shared: every row carries the 1-minute load average read just before it
started (2 cores: above 2 means the processes shared them with other work), and --json
appends every row to a file as one JSON line.

    scripts/distributed_env.sh .dist-env
    .dist-env/bin/python benchmarks/distributed.py [--sizes 1.0,0.7] [--processes 1,2]
        [--eigensolvers krylovschur,davidson] [--serial-max-dofs 150000] [--json rows.jsonl]
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

A, B, D = 0.02286, 0.01016, 0.030
THREADS = {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


def _model(msh: Path):
    from femcav.geometry.importer import read_mesh
    from femcav.materials import Material
    from femcav.model import make_model
    return make_model(read_mesh(msh), {"inside": Material()}, {})


def worker(msh: Path, modes: int) -> None:
    """Under mpiexec: one distributed solve; rank 0 prints one JSON line."""
    from mpi4py import MPI

    from femcav.solver import solve_model
    model = _model(msh)
    MPI.COMM_WORLD.Barrier()
    t0 = time.perf_counter()
    result = solve_model(model, modes=modes, method="distributed")
    seconds = time.perf_counter() - t0
    peaks = MPI.COMM_WORLD.gather(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024)
    times = MPI.COMM_WORLD.gather(seconds)
    if MPI.COMM_WORLD.rank == 0:
        print(json.dumps({"dofs": result.dofs, "seconds": max(times),
                          "assembly_s": result.timings["assembly_s"],
                          "eigen_s": result.timings["eigen_s"], "peak_bytes": peaks,
                          "frequencies_hz": [m.frequency_hz for m in result.modes],
                          "passed": result.passed}))


def _mesh(size_mm: float, folder: Path) -> Path:
    from femcav.geometry import build_part
    from femcav.io.mesh_files import write_msh
    path = folder / f"box-{size_mm}mm.msh"
    write_msh(build_part("box", width=A, height=B, length=D, mesh_size=size_mm * 1e-3), path)
    return path


def _serial(msh: Path, modes: int) -> tuple[list[float], float]:
    from femcav.solver import solve_model
    t0 = time.perf_counter()
    result = solve_model(_model(msh), modes=modes, method="direct")
    return [m.frequency_hz for m in result.modes], time.perf_counter() - t0


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--sizes", default="1.0,0.7", help="mesh sizes, mm")
    parser.add_argument("--processes", default="1,2")
    parser.add_argument("--modes", type=int, default=10)
    parser.add_argument("--eigensolvers", default="krylovschur",
                        help="krylovschur and/or davidson (-femcav_eigensolver)")
    parser.add_argument("--serial-max-dofs", type=int, default=150_000,
                        help="no serial direct reference above this (its memory)")
    parser.add_argument("--json", help="append every row to this file as a JSON line")
    parser.add_argument("--worker", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        worker(Path(args.worker), args.modes)
        return
    os.environ.update(THREADS)
    mpiexec = [shutil.which("mpiexec"), "--oversubscribe", "--allow-run-as-root"]
    print(f"threads per process: 1 ({', '.join(f'{k}=1' for k in THREADS)})")
    print(f"load average at start: {os.getloadavg()[0]:.1f} (2 cores: above 2 means sharing)")
    print(f"{'mesh':>7} {'DOFs':>8} {'eigensolver':>11} {'procs':>5} {'assembly':>9} "
          f"{'eigen':>8} {'total':>8} {'peak per process':>22} {'efficiency':>10} {'load':>5} "
          f"{'vs ref':>9}")
    with tempfile.TemporaryDirectory() as tmp:
        for size in map(float, args.sizes.split(",")):
            msh = _mesh(size, Path(tmp))
            serial = None
            if _dofs(msh) <= args.serial_max_dofs:
                serial, serial_s = _serial(msh, args.modes)
                print(f"{size:>5} mm serial direct (SuperLU, this process): {serial_s:.2f} s")
            for solver in args.eigensolvers.split(","):
                first = None
                for n in map(int, args.processes.split(",")):
                    load = os.getloadavg()[0]
                    row = _run(mpiexec, n, msh, args.modes, solver)
                    reference = serial or (first or row)["frequencies_hz"]
                    worst = max(abs(a / b - 1) for a, b in zip(row["frequencies_hz"],
                                                               reference))
                    first = first or dict(row, processes=n)
                    efficiency = first["seconds"] * first["processes"] / (n * row["seconds"])
                    peaks = "/".join(f"{p / 2**20:.0f}" for p in row["peak_bytes"]) + " MB"
                    print(f"{size:>5} mm {row['dofs']:>8} {solver:>11} {n:>5} "
                          f"{row['assembly_s']:>8.2f}s {row['eigen_s']:>7.2f}s "
                          f"{row['seconds']:>7.2f}s {peaks:>22} {efficiency:>10.2f} "
                          f"{load:>5.1f} {worst:>9.1e}"
                          + ("" if row["passed"] else "  CHECKS FAILED"), flush=True)
                    if args.json:
                        with open(args.json, "a") as out:
                            out.write(json.dumps(dict(row, mesh_mm=size, eigensolver=solver,
                                                      processes=n, efficiency=efficiency,
                                                      load_average=load,
                                                      worst_difference=worst)) + "\n")


def _dofs(msh: Path) -> int:
    """The free DOFs of the box's model on ``msh`` (order 1, E form)."""
    from femcav.fem.space import build_space
    return build_space(_model(msh), "E", 1).n_dofs


def _run(mpiexec: list, n: int, msh: Path, modes: int, solver: str) -> dict:
    run = subprocess.run(mpiexec + ["-n", str(n), sys.executable, __file__, "--worker",
                                    str(msh), "--modes", str(modes)],
                         capture_output=True, text=True, check=True,
                         env=dict(os.environ, PETSC_OPTIONS="-femcav_eigensolver " + solver))
    return json.loads(run.stdout.strip().splitlines()[-1])


if __name__ == "__main__":
    main()
