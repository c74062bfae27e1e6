"""Benchmark: an elliptical accelerating cell on its meridional section, time to 1e-6.

The closed mid-cell of the TESLA-like shape of tests/test_elliptical_cell.py (dimensions
from memory) with magnetic walls on its iris planes: the π mode of an endless chain of such
cells, m = 0, one mode, curved (6-node) section triangles, element order 3 (and 2 for
comparison). No closed form exists, so each frequency is compared with the same solve on a
finer reference mesh (self-convergence); the table gives the wall time from meshing the
section to the checked mode, and the first mesh within 1e-6 of the reference is reported.

One BLAS/OpenMP/MKL thread (set below, before numpy loads).

    python benchmarks/elliptical_cell.py [--reference-size MM]
"""

from __future__ import annotations

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

import argparse
import time

from femcav.axisymmetric.model import make_axisymmetric_model
from femcav.axisymmetric.solve import solve_axisymmetric
from femcav.eigen.factorization import describe
from femcav.geometry import BUILDERS
from femcav.geometry.parts import Sizing
from femcav.geometry.section import mesh_section
from femcav.materials import Material
from femcav.walls import Wall

CELL = dict(equator_radius=0.1033, iris_radius=0.035, half_cell_length=0.0577,
            equator_semi_axis_z=0.042, equator_semi_axis_r=0.042,
            iris_semi_axis_z=0.012, iris_semi_axis_r=0.019, pipe_length=0.0)
TARGET = 1e-6


def pi_mode(size: float, order: int):
    """(frequency in Hz, DOFs, wall time in s, checks passed) of the mid-cell's π mode."""
    t0 = time.perf_counter()
    layout = BUILDERS["elliptical_cells"].layout(**CELL)
    section = mesh_section(layout, Sizing(size=size, curved=True))
    model = make_axisymmetric_model(section, {"inside": Material()},
                                    {"bottom": Wall("pmc"), "top": Wall("pmc")})
    result = solve_axisymmetric(model, orders=(0,), modes=1, order=order)
    mode = result.modes[0]
    return mode.frequency_hz, result.dofs, time.perf_counter() - t0, mode.checks.passed


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--reference-size", type=float, default=1.0,
                        help="element size of the reference mesh, mm (default 1)")
    args = parser.parse_args()
    print(BUILDERS["elliptical_cells"].layout(**CELL).description)
    reference, ref_dofs, ref_time, _ = pi_mode(args.reference_size * 1e-3, 3)
    print(f"reference: order 3, h = {args.reference_size:.2f} mm, {ref_dofs} DOFs, "
          f"f = {reference / 1e9:.10f} GHz, {ref_time:.1f} s ({describe('auto')})")
    for order, sizes in ((2, (16, 8, 4, 2)), (3, (16, 12, 8, 6, 4, 3))):
        first = None
        for mm in sizes:
            f, dofs, seconds, passed = pi_mode(mm * 1e-3, order)
            error = abs(f / reference - 1)
            if first is None and error <= TARGET:
                first = (mm, seconds)
            print(f"   order {order}  h = {mm:4.1f} mm  DOFs {dofs:7d}  f = {f / 1e9:.10f} GHz  "
                  f"error {error:.1e}  wall time {seconds:6.2f} s  "
                  f"{'checks ok' if passed else 'CHECKS FAILED'}")
        print(f"order {order}: " + (f"within {TARGET:g} from h = {first[0]} mm in {first[1]:.2f} s"
                                    if first else f"not within {TARGET:g} on these meshes"))


if __name__ == "__main__":
    main()
