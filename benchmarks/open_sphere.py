"""Benchmark: radiation Q of a dielectric sphere in free space (an open problem, fem.absorber),
time and DOFs to reach Q_rad within 1 % of the exact complex resonance.

The sphere (radius 10 mm, eps_r 36, magnetic-dipole TE mode n = 1) is solved in 3D, order 2
on curved tetrahedra, with the default layer (strength 6) 20 mm beyond 20 mm of air, as a
1/8 model (the TE walls) and as the whole sphere, at a sequence of element sizes (inside the
sphere / outside). The exact resonance is the complex root of the characteristic equation
of the spherical-wave expansion (Stratton, Electromagnetic Theory, 1941;
femcav.analytic.dielectric_sphere). Wall time from meshing to the checked modes.

One BLAS/OpenMP/MKL thread (set below, before numpy loads).

    python benchmarks/open_sphere.py
"""

from __future__ import annotations

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

import time

from femcav.analytic.dielectric_sphere import dielectric_sphere_resonance   # noqa: E402
from femcav.fem.absorber import AbsorbingMaterial               # noqa: E402
from femcav.geometry import build_part                          # noqa: E402
from femcav.geometry.parts import Sizing                        # noqa: E402
from femcav.materials import VACUUM, Material                   # noqa: E402
from femcav.model import make_model                             # noqa: E402
from femcav.solver import solve_model                           # noqa: E402
from femcav.walls import Wall                                   # noqa: E402

RADIUS = 0.01

SIZES = ((0.004, 0.010), (0.003, 0.008), (0.002, 0.006))


def run(inside: float, outside: float, cut: bool) -> str:
    exact = dielectric_sphere_resonance(RADIUS, 36.0, "TE")
    q_exact = exact.real / (2 * exact.imag)
    start = time.perf_counter()
    mesh = build_part("sphere", radius=RADIUS, clearance=0.02, absorber_thickness=0.02,
                      symmetry=("x", "y", "z") if cut else (),
                      sizing=Sizing(size=outside, region_sizes={"sphere": inside},
                                    curved=True))
    walls = ({f"symmetry_{a}": Wall(kind=k) for a, k in zip("xyz", ("pec", "pec", "pmc"))}
             if cut else {})
    model = make_model(mesh, {"sphere": Material(eps_r=36.0), "air": VACUUM,
                              "absorber": AbsorbingMaterial(pml="spherical")}, walls)
    result = solve_model(model, modes=4 if cut else 6, near_hz=exact.real, order=2)
    seconds = time.perf_counter() - start
    mode = min(result.modes, key=lambda m: abs(m.complex_frequency_hz - exact))
    return (f"{'1/8' if cut else 'whole':>5}  {1e3 * inside:4.1f}/{1e3 * outside:4.1f} mm  "
            f"{result.dofs:>7}  {seconds:6.1f} s  {mode.frequency_hz / exact.real - 1:+.2e}  "
            f"{mode.q_radiation / q_exact - 1:+.3%}")


def main() -> None:
    print("model  sizes in/out      DOFs    time    df/f      dQ/Q")
    for cut in (True, False):
        for inside, outside in SIZES:
            print(run(inside, outside, cut), flush=True)


if __name__ == "__main__":
    main()
