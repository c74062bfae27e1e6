"""Benchmark: the eigen backends from 50k to 1M DOFs.

The box of the tests (22.86 x 10.16 x 30 mm) and a dielectric-resonator fixture (shield
r = 12 mm, h = 16 mm; puck r = 5 mm, h = 4 mm, eps_r = 30, on a support r = 2.5 mm, h = 4 mm,
eps_r = 2.1: a made-up part), order 1, the 10 lowest modes, at mesh sizes chosen for about
50k, 200k and 1M DOFs. For each size and backend that
fits in memory: wall time of the eigen solve (assembly reported apart), peak resident memory
of the whole process, iterations or operator applications, and the largest relative error of
the empty box's modes against the closed form (Pozar, Microwave Engineering, 4th ed., §6.3,
from memory). Then the exponent of time against DOFs fitted per backend, and the ratio of
each backend to SuperLU shift-invert at the sizes where that runs.

Every point runs in a fresh process with a fixed thread count (BLAS, OpenMP and MKL):
`--threads 1` (default) and `--threads 2` (the reference machine's vCPUs).

    python benchmarks/scale.py [--threads N] [--quick] [--largest K]
    # --quick: the 50k points only; --largest 2: up to 200k
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import time
from pathlib import Path

A, B, D = 0.02286, 0.01016, 0.030
# mesh sizes (mm) for about 50k, 200k, 1M DOFs at order 1 (DOFs ~ h^-3, from small meshes)
SIZES_MM = {"box": (0.88, 0.555, 0.325), "DR fixture": (0.90, 0.565, 0.33)}
BACKENDS = {                       # name: (method, factorization)
    "iterative (LOBPCG + HX)": ("iterative", "auto"),
    "direct, PARDISO": ("direct", "pardiso"),
    "direct, SuperLU": ("direct", "superlu"),
}
# Points not attempted, from the memory estimates and earlier runs (too slow or too large).
SKIP = {("direct, SuperLU", 2)}    # (backend, index of the size): SuperLU at 1M DOFs


def run_one(part: str, size_mm: float, backend: str) -> dict:
    import resource

    import numpy as np

    from femcav.analytic.box import lowest_box_frequencies
    from femcav.geometry import build_part
    from femcav.materials import Material
    from femcav.model import make_model
    from femcav.solver import solve_model

    method, factorization = BACKENDS[backend]
    t0 = time.perf_counter()
    if part == "box":
        mesh = build_part("box", width=A, height=B, length=D, mesh_size=size_mm * 1e-3)
        materials = {"inside": Material()}
    else:
        mesh = build_part("dr_fixture", shield_radius=0.012, shield_height=0.016,
                          puck_radius=0.005, puck_height=0.004, support_radius=0.0025,
                          support_height=0.004, mesh_size=size_mm * 1e-3)
        materials = {"air": Material(), "puck": Material(eps_r=30.0),
                     "support": Material(eps_r=2.1)}
    t_mesh = time.perf_counter() - t0
    result = solve_model(make_model(mesh, materials, {}), modes=10, method=method,
                         factorization=factorization)
    freqs = np.array([m.frequency_hz for m in result.modes])
    error = None
    if part == "box":
        error = float(np.max(np.abs(freqs / np.array(lowest_box_frequencies(A, B, D, 10)) - 1)))
    stats = result.eigen_stats
    return {"part": part, "size_mm": size_mm, "backend": backend, "dofs": result.dofs,
            "mesh_s": t_mesh, "assembly_s": result.timings["assembly_s"],
            "eigen_s": result.timings["eigen_s"],
            "steps": stats.steps,
            "peak_gb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024**2,
            "max_error": error, "passed": result.passed,
            "frequencies_hz": freqs.tolist()}


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--threads", type=int, default=1)
    parser.add_argument("--quick", action="store_true")
    parser.add_argument("--largest", type=int, default=3, help="how many of the sizes to run")
    args = parser.parse_args()
    env = dict(os.environ, OMP_NUM_THREADS=str(args.threads),
               OPENBLAS_NUM_THREADS=str(args.threads), MKL_NUM_THREADS=str(args.threads))
    rows = []
    for part, sizes in SIZES_MM.items():
        for index, size in enumerate(sizes[:1 if args.quick else args.largest]):
            for backend in BACKENDS:
                if (backend, index) in SKIP:
                    continue
                out = subprocess.run([sys.executable, __file__, "--one", part, str(size),
                                      backend], env=env, capture_output=True, text=True)
                if out.returncode != 0:
                    last = (out.stderr.strip().splitlines() or ["?"])[-1]
                    print(f"{part:<11}{size:>7.3f} mm  {backend:<24} not run: {last}", flush=True)
                    continue
                row = json.loads(out.stdout.strip().splitlines()[-1])
                rows.append(row)
                err = "" if row["max_error"] is None else f"  max error {row['max_error']:.2e}"
                print(f"{part:<11}{size:>7.3f} mm  {backend:<24} DOFs {row['dofs']:>8}  "
                      f"assembly {row['assembly_s']:6.1f} s  eigen {row['eigen_s']:7.1f} s  "
                      f"steps {row['steps']:>5}  peak {row['peak_gb']:5.1f} GB{err}"
                      f"{'' if row['passed'] else '  CHECKS FAILED'}", flush=True)
    summary = _summary(rows)
    print("\n".join(summary))
    folder = Path(__file__).parent / "out"
    folder.mkdir(exist_ok=True)
    (folder / f"scale_threads{args.threads}.json").write_text(
        json.dumps({"threads": args.threads, "rows": rows, "summary": summary}, indent=2) + "\n")


def _summary(rows: list[dict]) -> list[str]:
    lines = []
    for part in SIZES_MM:
        for backend in BACKENDS:
            pts = [(r["dofs"], r["eigen_s"]) for r in rows
                   if r["part"] == part and r["backend"] == backend]
            if len(pts) >= 2:
                (n0, t0), (n1, t1) = pts[0], pts[-1]
                lines.append(f"{part}, {backend}: time ~ DOFs^{math.log(t1 / t0) / math.log(n1 / n0):.2f}"
                             f" ({n0} to {n1} DOFs)")
        for r in rows:
            if r["part"] != part or r["backend"] == "direct, SuperLU":
                continue
            ref = next((q for q in rows if q["part"] == part and q["size_mm"] == r["size_mm"]
                        and q["backend"] == "direct, SuperLU"), None)
            if ref:
                lines.append(f"{part}, {r['dofs']} DOFs: SuperLU / {r['backend']} = "
                             f"{ref['eigen_s'] / r['eigen_s']:.1f}")
    return lines


if __name__ == "__main__":
    if len(sys.argv) == 5 and sys.argv[1] == "--one":
        print(json.dumps(run_one(sys.argv[2], float(sys.argv[3]), sys.argv[4])))
    else:
        main()
