"""Benchmark: the empty box at three mesh sizes, and a naive baseline at the smallest.

For each mesh size it prints DOFs, assembly seconds, eigen-solve seconds, peak resident memory
and the largest relative error of the 10 lowest modes against the closed form (Pozar,
Microwave Engineering, 4th ed., §6.3). The baseline is plain scipy eigsh in shift-invert mode
with no kernel deflation: to reach the 10 lowest physical modes it has to ask for
(gradient-space dimension + 10) eigenpairs, because every gradient field is an eigenvector at
zero. It is run at the smallest size only.

Each case runs in a fresh process (so peak memory is its own) with one BLAS/OpenMP thread:
on the 2-vCPU reference machine extra threads slowed the direct solvers.

    python benchmarks/box_solve.py            # prints the table, writes benchmarks/out/
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

THREAD_VARIABLES = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
A, B, D = 0.02286, 0.01016, 0.030
SIZES_MM = (2.0, 1.3, 0.85)


def run_one(size_mm: float, naive: bool) -> dict:
    import resource
    import time

    import numpy as np
    from scipy.sparse.linalg import eigsh

    from femcav.analytic.box import lowest_box_frequencies
    from femcav.fem.assembly import assemble
    from femcav.fem.space import build_space
    from femcav.geometry import build_part
    from femcav.materials import Material
    from femcav.model import make_model
    from femcav.solver import C0, solve_model

    mesh = build_part("box", width=A, height=B, length=D, mesh_size=size_mm * 1e-3)
    model = make_model(mesh, {"inside": Material()}, {})
    reference = np.array(lowest_box_frequencies(A, B, D, 10))
    if naive:
        t0 = time.perf_counter()
        space = build_space(model, "E")
        K, M = assemble(space)
        t_asm = time.perf_counter() - t0
        kernel = space.scalar_constraint.size
        t0 = time.perf_counter()
        values = eigsh(K, k=kernel + 10, M=M, sigma=-1.0, which="LM",
                       return_eigenvectors=False)
        t_eig = time.perf_counter() - t0
        physical = np.sort(values)[-10:]
        freqs = C0 * np.sqrt(physical) / (2 * np.pi)
        dofs = space.n_dofs
    else:
        result = solve_model(model, modes=10, factorization="superlu")  # as plain eigsh uses
        t_asm, t_eig = result.timings["assembly_s"], result.timings["eigen_s"]
        freqs = np.array([m.frequency_hz for m in result.modes])
        dofs = result.dofs
    return {"size_mm": size_mm, "naive": naive, "dofs": dofs, "assembly_s": t_asm,
            "eigen_s": t_eig, "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
            "max_rel_error": float(np.max(np.abs(freqs / reference - 1)))}


def main() -> None:
    env = dict(os.environ, **{v: "1" for v in THREAD_VARIABLES})
    rows = []
    for size, naive in [(s, False) for s in SIZES_MM] + [(SIZES_MM[0], True)]:
        out = subprocess.run([sys.executable, __file__, "--one", str(size), str(int(naive))],
                             env=env, capture_output=True, text=True, check=True)
        rows.append(json.loads(out.stdout.strip().splitlines()[-1]))
    lines = ["box 22.86 x 10.16 x 30 mm, 10 lowest modes, E form, SuperLU (METIS order), "
             "1 thread",
             f"{'method':<22}{'mesh':>8}{'DOFs':>9}{'assembly':>11}{'solve':>10}{'peak':>10}"
             f"{'max error':>11}"]
    for r in rows:
        name = "eigsh, no deflation" if r["naive"] else "femcav deflated"
        lines.append(f"{name:<22}{r['size_mm']:>6.2f}mm{r['dofs']:>9}{r['assembly_s']:>10.2f}s"
                     f"{r['eigen_s']:>9.2f}s{r['peak_mb']:>8.0f}MB{r['max_rel_error']:>11.2e}")
    ours = next(r for r in rows if not r["naive"] and r["size_mm"] == SIZES_MM[0])
    naive = next(r for r in rows if r["naive"])
    lines.append(f"solve-time ratio naive / femcav at {SIZES_MM[0]} mm: "
                 f"{naive['eigen_s'] / ours['eigen_s']:.1f}")
    text = "\n".join(lines)
    print(text)
    folder = Path(__file__).parent / "out"
    folder.mkdir(exist_ok=True)
    (folder / "box_solve.txt").write_text(text + "\n")
    (folder / "box_solve.json").write_text(json.dumps(rows, indent=2) + "\n")


if __name__ == "__main__":
    if len(sys.argv) == 4 and sys.argv[1] == "--one":
        print(json.dumps(run_one(float(sys.argv[2]), bool(int(sys.argv[3])))))
    else:
        main()
