"""Benchmark: how far the pillbox TM010 frequency goes on this machine.

Order-3 Nédélec elements on curved (10-node) tetrahedra, one mode near TM010 of the pillbox
r = 10 mm, l = 15 mm, against f = c p01 / (2π r) with p01 from scipy.special (Pozar,
Microwave Engineering, 4th ed., §6.4). Run with one BLAS/MKL thread; pass the mesh size in
mm and optionally the factorisation (auto, superlu, pardiso; default auto).

Measured on the 2-vCPU, 24 GB reference machine (1 thread):
  1.1 mm: 293 112 DOFs, error 8.9e-8, 105 s,  3.4 GB peak, MKL PARDISO (56 s factorisation)
  1.1 mm: 293 112 DOFs, error 8.9e-8, 719 s, 18.9 GB peak, SuperLU with METIS ordering
  1.5 mm: 115 746 DOFs, error 3.1e-7,  85 s,  4.7 GB peak, SuperLU

    OMP_NUM_THREADS=1 MKL_NUM_THREADS=1 python benchmarks/pillbox_tm010_high_accuracy.py 1.5
"""

import math
import resource
import sys
import time

from scipy.constants import c
from scipy.special import jn_zeros

from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.progress import Progress
from femcav.solver import solve_model

if __name__ == "__main__":
    size_mm = float(sys.argv[1]) if len(sys.argv) > 1 else 1.5
    factorization = sys.argv[2] if len(sys.argv) > 2 else "auto"
    exact = c * jn_zeros(0, 1)[0] / (2 * math.pi * 0.01)
    t0 = time.perf_counter()
    mesh = build_part("pillbox", radius=0.01, length=0.015, mesh_size=size_mm * 1e-3, curved=True)
    result = solve_model(make_model(mesh, {"inside": Material()}, {}), modes=1, order=3,
                         near_hz=exact, factorization=factorization, progress=Progress())
    error = result.modes[0].frequency_hz / exact - 1
    peak_gb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024**2
    print(f"h = {size_mm} mm: {result.dofs} DOFs, TM010 relative error {error:.2e}, "
          f"{time.perf_counter() - t0:.0f} s, peak {peak_gb:.1f} GB "
          f"({result.eigen_stats.factorization})")
