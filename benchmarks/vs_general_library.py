"""Benchmark: femcav against a general-purpose finite-element library (NGSolve) on one cavity.

The 10 lowest modes of a PEC pillbox (radius 10 mm, length 15 mm; the case of issue 25),
whole process from the command line, one BLAS/OpenMP/MKL thread, the two programs
alternated run by run so that both see the same load on a shared machine. Reported: CPU time
(user + sys of the child process, which the load on a shared machine distorts much less than
wall time), wall time, DOFs, and the largest relative error of the 10 frequencies against the
Bessel-zero formulas (Pozar, Microwave Engineering, 4th ed., §6.4, from memory; zeros from
scipy.special through femcav.analytic.cylinder).

- femcav: `femcav solve CASE --no-report -q` on a case file with order 3, curved tetrahedra,
  3.3 mm, all walls PEC (the default install uses SuperLU; `--factorization` picks another).
- NGSolve, driven as its Maxwell-eigenvalue tutorial does: OCC cylinder, netgen mesh of
  3.0 mm curved to order 3, H(curl) order 3, a sparse Cholesky factorisation of
  curl-curl + s mass, and ARPACK (scipy's eigsh) shift-invert with the gradient fields
  projected out through the H1 space of the same order.

NGSolve is NOT a femcav dependency: install it into a separate environment of its own, e.g.

    python3 -m venv /work/ngs-venv && /work/ngs-venv/bin/pip install ngsolve scipy
    OMP_NUM_THREADS=1 python benchmarks/vs_general_library.py --ngsolve-python /work/ngs-venv/bin/python

Without that interpreter the script measures femcav alone and says so.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

RADIUS, LENGTH, COUNT = 0.010, 0.015, 10

CASE = """
title = "pillbox R 10 mm, L 15 mm (benchmark against a general-purpose library)"
[geometry]
builder = "pillbox"
radius = "10 mm"
length = "15 mm"
[mesh]
size = "{size_mm} mm"
curved = true
[regions.inside]
eps_r = 1.0
[walls.side]
kind = "pec"
[walls.bottom]
kind = "pec"
[walls.top]
kind = "pec"
[solve]
modes = 10
order = 3
factorization = "{factorization}"
"""

# The NGSolve side, run by the other interpreter: prints the frequencies (Hz) and DOFs as JSON.
NGSOLVE_PROGRAM = r"""
import json, math, sys
import numpy as np
from scipy.sparse.linalg import LinearOperator, eigsh
from ngsolve import (HCurl, H1, BilinearForm, Mesh, curl, grad, dx, IdentityMatrix)
from netgen.occ import Cylinder, Pnt, Z, OCCGeometry

R, L, h, count = float(sys.argv[1]), float(sys.argv[2]), float(sys.argv[3]), int(sys.argv[4])
mesh = Mesh(OCCGeometry(Cylinder(Pnt(0, 0, 0), Z, r=R, h=L)).GenerateMesh(maxh=h))
mesh.Curve(3)
fes = HCurl(mesh, order=3, dirichlet=".*")
u, v = fes.TnT()
a = BilinearForm(curl(u) * curl(v) * dx).Assemble()
m = BilinearForm(u * v * dx).Assemble()
shift = (math.pi / L) ** 2            # below the lowest eigenvalue: K + sM is positive definite
shifted = BilinearForm(curl(u) * curl(v) * dx + shift * u * v * dx).Assemble()
inverse = shifted.mat.Inverse(fes.FreeDofs(), inverse="sparsecholesky")
# gradient projection: I - G (Gᵀ M G)⁻¹ Gᵀ M, Gᵀ M G being the H1 Laplacian here (ε = 1)
gradmat, fesh1 = fes.CreateGradient()
uh, vh = fesh1.TnT()
laplace = BilinearForm(grad(uh) * grad(vh) * dx).Assemble()
laplace_inverse = laplace.mat.Inverse(fesh1.FreeDofs(), inverse="sparsecholesky")
projection = IdentityMatrix() - gradmat @ laplace_inverse @ gradmat.CreateTranspose() @ m.mat

free = np.flatnonzero(np.array(fes.FreeDofs(), dtype=bool))
import scipy.sparse as sp
M = sp.csr_matrix(m.mat.CSR(), shape=(fes.ndof, fes.ndof))[free][:, free]
K = sp.csr_matrix(a.mat.CSR(), shape=(fes.ndof, fes.ndof))[free][:, free]
work_in, work_mid, work_out = inverse.CreateColVector(), inverse.CreateColVector(), \
    inverse.CreateColVector()

def apply(x):
    work_in.FV().NumPy()[:] = 0.0
    work_in.FV().NumPy()[free] = x
    work_mid.data = inverse * work_in
    work_out.data = projection * work_mid
    return work_out.FV().NumPy()[free].copy()

operator = LinearOperator((free.size, free.size), matvec=apply, dtype=float)
values = eigsh(K, k=count + 5, M=M, sigma=-shift, OPinv=operator, which="LM",
               tol=1e-10, return_eigenvectors=False)
values = np.sort(values[values > 1e-6 * shift])[:count]
print(json.dumps({"frequencies_hz": list(299792458.0 * np.sqrt(values) / (2 * math.pi)),
                  "dofs": int(free.size), "elements": mesh.ne}))
"""


def timed(command: list[str], env: dict) -> tuple[float, float, str]:
    """(CPU seconds of the child, wall seconds, its stdout)."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    done = subprocess.run(command, env=env, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if done.returncode not in (0, 3):
        sys.exit(f"{command[0]} failed ({done.returncode}):\n{done.stderr[-2000:]}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return cpu, wall, done.stdout


def femcav_run(case: Path, out: Path, env: dict) -> dict:
    cpu, wall, _ = timed([sys.executable, "-m", "femcav", "solve", str(case), "--out",
                          str(out), "--no-report", "-q"], env)
    document = json.loads((out / "modes.json").read_text())
    return {"cpu": cpu, "wall": wall, "dofs": document.get("dofs"),
            "frequencies_hz": [m["frequency_hz"] for m in document["modes"]]}


def ngsolve_run(python: str, size: float, program: Path, env: dict) -> dict:
    cpu, wall, stdout = timed([python, str(program), str(RADIUS), str(LENGTH), str(size),
                               str(COUNT)], env)
    return {"cpu": cpu, "wall": wall, **json.loads(stdout.strip().splitlines()[-1])}


def largest_error(frequencies: list[float]) -> float:
    from femcav.analytic.cylinder import lowest_pillbox_frequencies

    exact = lowest_pillbox_frequencies(RADIUS, LENGTH, COUNT)
    return max(abs(f / e - 1) for f, e in zip(sorted(frequencies)[:COUNT], exact))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--ngsolve-python", default="/work/ngs-venv/bin/python",
                        help="interpreter of the environment NGSolve is installed in")
    parser.add_argument("--runs", type=int, default=3, help="alternated runs of each")
    parser.add_argument("--femcav-size", type=float, default=3.3, help="mm")
    parser.add_argument("--ngsolve-size", type=float, default=3.0, help="mm")
    parser.add_argument("--factorization", default="superlu",
                        help="femcav's sparse direct library (superlu: the default install)")
    args = parser.parse_args()
    env = {**os.environ, "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1",
           "MKL_NUM_THREADS": "1"}
    have_ngsolve = Path(args.ngsolve_python).exists() and subprocess.run(
        [args.ngsolve_python, "-c", "import ngsolve, scipy"], capture_output=True).returncode == 0
    if not have_ngsolve:
        print(f"NGSolve (with scipy) not found at {args.ngsolve_python}: femcav alone")
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        case = tmp / "pillbox.toml"
        case.write_text(CASE.format(size_mm=args.femcav_size, factorization=args.factorization))
        program = tmp / "ngsolve_pillbox.py"
        program.write_text(NGSOLVE_PROGRAM)
        rows = {"femcav": [], "NGSolve": []}
        for run in range(args.runs):
            rows["femcav"].append(femcav_run(case, tmp / f"out{run}", env))
            if have_ngsolve:
                rows["NGSolve"].append(ngsolve_run(args.ngsolve_python,
                                                   args.ngsolve_size / 1000, program, env))
    print(f"pillbox R 10 mm, L 15 mm, {COUNT} lowest modes, whole process, one thread, "
          f"{args.runs} alternated runs (median)")
    medians = {}
    for name, runs in rows.items():
        if not runs:
            continue
        cpu = sorted(r["cpu"] for r in runs)[len(runs) // 2]
        wall = sorted(r["wall"] for r in runs)[len(runs) // 2]
        medians[name] = cpu
        detail = (f"order 3, curved, {args.femcav_size} mm, {args.factorization}"
                  if name == "femcav" else f"order 3, curved, {args.ngsolve_size} mm")
        print(f"{name:8s} {detail:36s} DOFs {runs[0]['dofs']:6d}  CPU {cpu:5.2f} s  "
              f"wall {wall:5.2f} s  max error {largest_error(runs[0]['frequencies_hz']):.1e}  "
              f"(CPU of each run: {', '.join(format(r['cpu'], '.2f') for r in runs)} s)")
    if len(medians) == 2:
        print(f"CPU-time ratio NGSolve / femcav: {medians['NGSolve'] / medians['femcav']:.2f}")


if __name__ == "__main__":
    main()
