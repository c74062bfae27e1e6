"""Benchmark: accuracy per DOF and per second for the pillbox (radius 10 mm, length 15 mm).

For order 1 on flat facets, order 2 on flat facets, order 2 curved and order 3 curved, over a
range of mesh sizes: DOFs, assembly + solve seconds, relative error of TM010 and the largest
relative error of the 10 lowest modes against the Bessel-zero formulas (Pozar, Microwave
Engineering, 4th ed., §6.4; zeros from scipy.special). Each point runs in a fresh process
with one BLAS/OpenMP/MKL thread (threads did not help on the 2-vCPU reference machine). Writes a
table and a log-log plot to benchmarks/out/.

    python benchmarks/accuracy_per_dof.py
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

RADIUS, LENGTH = 0.010, 0.015
# name: (order, curved, mesh sizes, factorization); "auto" is PARDISO where femcav[fast] is
# installed. The last series repeats order 3 with SuperLU, the fallback that always works.
SERIES = {
    "order 1, flat": (1, False, (0.002, 0.0014, 0.001, 0.0008), "auto"),
    "order 2, flat": (2, False, (0.004, 0.003, 0.002, 0.0015), "auto"),
    "order 2, curved": (2, True, (0.006, 0.004, 0.003, 0.002, 0.0015), "auto"),
    "order 3, curved": (3, True, (0.008, 0.006, 0.0042, 0.0033, 0.0025, 0.0022), "auto"),
    "order 3, curved, SuperLU": (3, True, (0.0042, 0.0033, 0.0025), "superlu"),
}


def run_one(order: int, curved: bool, size: float, factorization: str) -> dict:
    import time

    import numpy as np

    from femcav.analytic.cylinder import lowest_pillbox_frequencies
    from femcav.geometry import build_part
    from femcav.materials import Material
    from femcav.model import make_model
    from femcav.solver import solve_model

    reference = np.array(lowest_pillbox_frequencies(RADIUS, LENGTH, 10))
    t0 = time.perf_counter()
    mesh = build_part("pillbox", radius=RADIUS, length=LENGTH, mesh_size=size, curved=curved)
    t_mesh = time.perf_counter() - t0
    result = solve_model(make_model(mesh, {"inside": Material()}, {}), modes=10, order=order,
                         factorization=factorization)
    freqs = np.array([m.frequency_hz for m in result.modes])
    errors = np.abs(freqs / reference - 1)
    return {"order": order, "curved": curved, "size": size, "dofs": result.dofs,
            "mesh_s": t_mesh, "solve_s": result.timings["assembly_s"] + result.timings["eigen_s"],
            "tm010_error": float(errors[0]), "max_error": float(errors.max()),
            "factorization": result.eigen_stats.factorization}


def main() -> None:
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1")
    rows = []
    for name, (order, curved, sizes, factorization) in SERIES.items():
        for size in sizes:
            out = subprocess.run([sys.executable, __file__, "--one", str(order), str(int(curved)),
                                  str(size), factorization],
                                 env=env, capture_output=True, text=True, check=True)
            row = json.loads(out.stdout.strip().splitlines()[-1])
            row["series"] = name
            rows.append(row)
            print(f"{name:<24} h={size * 1e3:5.2f} mm  DOFs {row['dofs']:>7}  "
                  f"assembly+solve {row['solve_s']:7.2f} s  TM010 {row['tm010_error']:.2e}  "
                  f"max(10) {row['max_error']:.2e}  ({row['factorization']})", flush=True)
    folder = Path(__file__).parent / "out"
    folder.mkdir(exist_ok=True)
    (folder / "accuracy_per_dof.json").write_text(json.dumps(rows, indent=2) + "\n")
    _plot(rows, folder / "accuracy_per_dof.png")


def _plot(rows, path) -> None:
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, axes = plt.subplots(1, 2, figsize=(11, 4.5))
    for name in SERIES:
        series = [r for r in rows if r["series"] == name]
        for ax, key in zip(axes, ("dofs", "solve_s")):
            ax.loglog([r[key] for r in series], [r["max_error"] for r in series], "o-", label=name)
    axes[0].set_xlabel("DOFs")
    axes[1].set_xlabel("assembly + solve time, s (1 thread)")
    for ax in axes:
        ax.set_ylabel("max relative error, 10 lowest modes")
        ax.grid(True, which="both", alpha=0.3)
    axes[0].legend()
    fig.suptitle("pillbox r = 10 mm, l = 15 mm")
    fig.tight_layout()
    fig.savefig(path, dpi=110)


if __name__ == "__main__":
    if len(sys.argv) == 6 and sys.argv[1] == "--one":
        print(json.dumps(run_one(int(sys.argv[2]), bool(int(sys.argv[3])), float(sys.argv[4]),
                                 sys.argv[5])))
    else:
        main()
