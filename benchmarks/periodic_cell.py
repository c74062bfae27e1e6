"""Benchmark: the dispersion of an elliptical accelerating cell in 3D, 13 phases on one mesh.

The TESLA-like mid-cell of tests/test_elliptical_cell.py (dimensions from memory), meshed in
3D with curved tetrahedra, a quarter of it (magnetic walls on x = 0 and y = 0, where the
TM010-like mode has no tangential H), its iris planes `bottom` and `top` a periodic pair:
the endless chain of such cells. `femcav dispersion` solves 0 to 180° in 15° steps at
element order 2. Per mesh size the table gives the DOFs, the wall time per phase and the
TM010-like band at 0, 2π/3 and π. References: the 0 and π modes of a symmetric cell are the
mid-cell with electric and with magnetic iris planes (common practice), solved on the
meridional section at order 3 on a fine mesh (femcav's axisymmetric solver, converged to
about 1e-7 there: benchmarks/elliptical_cell.py); at 2π/3 the nearest-neighbour
coupled-oscillator model through those two, f0 sqrt(1 + κ(1 - cos φ)) (T. P. Wangler, RF
Linear Accelerators, Wiley 1998, multicell chapter; from memory), which holds to about 1e-3
(next-neighbour coupling), so the 2π/3 column shows the model's error as much as femcav's.

The same endless chain on the cell's meridional section (a body of revolution periodic along
z, azimuthal order 0, element order 3) runs first, at --section-sizes.
One BLAS/OpenMP/MKL thread (set below, before numpy loads).

    python benchmarks/periodic_cell.py [--sizes 20,16,12] [--section-sizes 8,4] [--only-section]
"""

from __future__ import annotations

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

import argparse
import math
import tempfile
import time
from pathlib import Path

from femcav.axisymmetric.model import make_axisymmetric_model
from femcav.axisymmetric.solve import solve_axisymmetric
from femcav.geometry import BUILDERS
from femcav.geometry.parts import Sizing
from femcav.geometry.section import mesh_section
from femcav.materials import Material
from femcav.study.dispersion import run_dispersion
from femcav.walls import Wall

CELL = dict(equator_radius=0.1033, iris_radius=0.035, half_cell_length=0.0577,
            equator_semi_axis_z=0.042, equator_semi_axis_r=0.042,
            iris_semi_axis_z=0.012, iris_semi_axis_r=0.019)

CASE = """
title = "TESLA-like mid-cell, endless chain (benchmark)"
[geometry]
builder = "elliptical_cells"
cells = 1
pipe_length = 0
equator_radius = "103.3 mm"
iris_radius = "35 mm"
half_cell_length = "57.7 mm"
equator_semi_axis_z = "42 mm"
equator_semi_axis_r = "42 mm"
iris_semi_axis_z = "12 mm"
iris_semi_axis_r = "19 mm"
[mesh]
size = "{size} mm"
curved = true
[symmetry]
x = "pmc"
y = "pmc"
[periodic]
pair = ["bottom", "top"]
[dispersion]
from = "0 deg"
to = "180 deg"
points = 13
[solve]
modes = 2
order = 2
"""


def section_reference(end_kind: str) -> float:
    """The mid-cell's TM010-like mode with ``end_kind`` iris planes, on the section."""
    layout = BUILDERS["elliptical_cells"].layout(**CELL, pipe_length=0.0)
    section = mesh_section(layout, Sizing(size=0.004, curved=True))
    walls = {"bottom": Wall(end_kind), "top": Wall(end_kind)}
    model = make_axisymmetric_model(section, {"inside": Material()}, walls)
    return solve_axisymmetric(model, orders=(0,), modes=1, order=3).modes[0].frequency_hz


def on_section(case: str) -> str:
    """The 3D case's cell solved on its section: no symmetry cuts, azimuthal order 0."""
    return (case.replace('[symmetry]\nx = "pmc"\ny = "pmc"\n', "")
            .replace("modes = 2\norder = 2", "modes = 2\norder = 3\nazimuthal_orders = [0]"))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="20,16,12", help="mesh sizes in mm, coarse first")
    parser.add_argument("--section-sizes", default="8,4", help="section sizes in mm")
    parser.add_argument("--only-section", action="store_true", help="skip the 3D runs")
    args = parser.parse_args()
    sizes = [] if args.only_section else [float(s) for s in args.sizes.split(",")]
    runs = ([(float(s), on_section(CASE), "section") for s in args.section_sizes.split(",")]
            + [(s, CASE, "3D") for s in sizes])
    f0, f_pi = section_reference("pec"), section_reference("pmc")
    kappa = (f_pi**2 / f0**2 - 1) / 2
    f_model = f0 * math.sqrt(1 + kappa * (1 - math.cos(2 * math.pi / 3)))
    print(f"references: 0 mode {f0 / 1e9:.7f} GHz, π mode {f_pi / 1e9:.7f} GHz "
          f"(section, order 3), 2π/3 by the coupled-cell model {f_model / 1e9:.7f} GHz")
    print(f"{'':>8} {'size':>7} {'DOFs':>7} {'s/phase':>8} {'f(0) GHz':>11} {'err':>8} "
          f"{'f(2π/3) GHz':>12} {'err':>8} {'f(π) GHz':>11} {'err':>8}")
    for size, text, kind in runs:
        with tempfile.TemporaryDirectory() as folder:
            case = Path(folder) / "cell.toml"
            case.write_text(text.format(size=size), encoding="utf-8")
            t0 = time.perf_counter()
            document, _ = run_dispersion(case, out=Path(folder) / "out")
            wall = time.perf_counter() - t0
        band = document["bands"][0]["frequency_hz"]
        phases = document["phases_deg"]
        at = {p: band[phases.index(p)] for p in (0.0, 180.0)}
        at[120.0] = band[min(range(len(phases)), key=lambda i: abs(phases[i] - 120.0))]
        print(f"{kind:>8} {size:5.1f}mm {document['dofs']:7d} "
              f"{sum(document['seconds_per_phase']) / len(phases):8.2f} "
              f"{at[0.0] / 1e9:11.7f} {at[0.0] / f0 - 1:8.1e} "
              f"{at[120.0] / 1e9:12.7f} {at[120.0] / f_model - 1:8.1e} "
              f"{at[180.0] / 1e9:11.7f} {at[180.0] / f_pi - 1:8.1e}   ({wall:.0f} s in all)")


if __name__ == "__main__":
    main()
