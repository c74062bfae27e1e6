"""Benchmark: radiation Q of open resonators on the meridional section and in 3D: time and
DOFs to reach Q_rad within 1 %.

Sphere: radius 10 mm, eps_r 36, magnetic-dipole TE mode (n = 1), against the exact complex
root of the characteristic equation of the spherical-wave expansion (Stratton,
Electromagnetic Theory, 1941; femcav.analytic.dielectric_sphere). Puck (Larkspur Microwave
Works' made-up part): a = 5 mm, H = 4 mm, eps_r 38, TE01δ mode, against the finest section
solve below (order 3, 0.5 mm in the puck, 2 mm outside: the reference, its own error far
below 1 %). Both: 20 mm (sphere) or 10 mm (puck) of air and of spherical layer, default
strength 6, curved elements. Section: m = 0 only (the mode's azimuthal order), orders 2 and
3. 3D: order 2, the 1/8 model with the magnetic-dipole walls. Wall and CPU time of this
process from meshing to the checked modes (gmsh's own threads aside, CPU time is the
load-independent figure on a shared machine).

One BLAS/OpenMP/MKL thread (set below, before numpy loads); the machine's load average is
printed with the table, since other processes share its cores.

    python benchmarks/open_resonators.py
"""

from __future__ import annotations

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

import math  # noqa: E402
import time  # noqa: E402

from femcav.analytic.dielectric_sphere import dielectric_sphere_resonance   # noqa: E402
from femcav.axisymmetric.model import make_axisymmetric_model   # noqa: E402
from femcav.axisymmetric.solve import solve_axisymmetric        # noqa: E402
from femcav.fem.absorber import AbsorbingMaterial               # noqa: E402
from femcav.geometry import build_part, builder_layout          # noqa: E402
from femcav.geometry.parts import Sizing                        # noqa: E402
from femcav.geometry.section import mesh_section                # noqa: E402
from femcav.materials import VACUUM, Material                   # noqa: E402
from femcav.model import make_model                             # noqa: E402
from femcav.solver import solve_model                           # noqa: E402
from femcav.walls import Wall                                   # noqa: E402

# (inside the part, outside) element sizes, m, on the section and in 3D; the layer gets at
# least three elements across (as a case's [open] layer does)
SPHERE = dict(builder="sphere", part="sphere", eps_r=36.0, parameters={"radius": 0.01},
              open_sizes={"clearance": 0.02, "absorber_thickness": 0.02},
              section_sizes=((0.004, 0.012), (0.003, 0.008), (0.002, 0.006), (0.001, 0.004)),
              solid_sizes=((0.004, 0.010), (0.003, 0.008), (0.002, 0.006)))
PUCK = dict(builder="puck", part="puck", eps_r=38.0,
            parameters={"radius": 0.005, "height": 0.004},
            open_sizes={"clearance": 0.01, "absorber_thickness": 0.01},
            section_sizes=((0.004, 0.01), (0.003, 0.008), (0.002, 0.005), (0.001, 0.003)),
            solid_sizes=((0.004, 0.01), (0.003, 0.008), (0.002, 0.005), (0.001, 0.003)))
REFERENCE_PUCK = (0.0005, 0.002)
TE_WALLS = {"symmetry_x": Wall(kind="pec"), "symmetry_y": Wall(kind="pec"),
            "symmetry_z": Wall(kind="pmc")}


def sizing(part: dict, inside: float, outside: float) -> Sizing:
    layer = min(outside, part["open_sizes"]["absorber_thickness"] / 3)
    return Sizing(size=outside, region_sizes={part["part"]: inside, "absorber": layer},
                  curved=True)


def materials(part: dict) -> dict:
    return {part["part"]: Material(eps_r=part["eps_r"]), "air": VACUUM,
            "absorber": AbsorbingMaterial(pml="spherical")}


def section_solve(part: dict, inside: float, outside: float, order: int, near_hz: float):
    start = time.perf_counter(), time.process_time()
    layout = builder_layout(part["builder"], {**part["parameters"], **part["open_sizes"]})
    section = mesh_section(layout, sizing(part, inside, outside))
    result = solve_axisymmetric(make_axisymmetric_model(section, materials(part), {}),
                                orders=(0,), modes=3, near_hz=near_hz, order=order)
    return result, (time.perf_counter() - start[0], time.process_time() - start[1])


def solid_solve(part: dict, inside: float, outside: float, near_hz: float):
    start = time.perf_counter(), time.process_time()
    mesh = build_part(part["builder"], symmetry=("x", "y", "z"),
                      sizing=sizing(part, inside, outside),
                      **part["parameters"], **part["open_sizes"])
    result = solve_model(make_model(mesh, materials(part), TE_WALLS), modes=3,
                         near_hz=near_hz, order=2)
    return result, (time.perf_counter() - start[0], time.process_time() - start[1])


def row(label: str, sizes, result, seconds, reference: complex) -> tuple[str, float]:
    mode = min(result.modes, key=lambda m: abs(m.complex_frequency_hz - reference))
    q_ref = reference.real / (2 * reference.imag)
    dq = mode.q_radiation / q_ref - 1
    return (f"{label:<18} {1e3 * sizes[0]:4.1f}/{1e3 * sizes[1]:4.1f} mm  {result.dofs:>7}  "
            f"{seconds[0]:6.2f} s {seconds[1]:6.2f} s  "
            f"{mode.frequency_hz / reference.real - 1:+.2e}  {dq:+.3%}",
            abs(dq))


def study(name: str, part: dict, reference: complex) -> None:
    print(f"\n{name}: reference {reference.real / 1e9:.6f} GHz, Q "
          f"{reference.real / (2 * reference.imag):.2f}")
    print("solve              sizes in/out      DOFs      wall      CPU   df/f       dQ/Q")
    reached = {}
    runs = [(f"section order {k}", s, lambda s=s, k=k: section_solve(part, *s, k,
                                                                     reference.real))
            for k in (2, 3) for s in part["section_sizes"]]
    runs += [("3D 1/8 order 2", s, lambda s=s: solid_solve(part, *s, reference.real))
             for s in part["solid_sizes"]]
    for label, sizes, solve in runs:
        result, seconds = solve()
        text, dq = row(label, sizes, result, seconds, reference)
        print(text, flush=True)
        if dq < 0.01 and label not in reached:
            reached[label] = (result.dofs, seconds)
    for label, (dofs, seconds) in reached.items():
        print(f"  Q_rad within 1 %: {label}, {dofs} DOFs, {seconds[0]:.2f} s wall, "
              f"{seconds[1]:.2f} s CPU")


def main() -> None:
    load = os.getloadavg()
    print(f"one BLAS thread (OMP/OPENBLAS/MKL_NUM_THREADS=1); load average "
          f"{load[0]:.2f}, {load[1]:.2f}, {load[2]:.2f} on {os.cpu_count()} cores")
    study("sphere eps_r 36, TE (n = 1)", SPHERE,
          dielectric_sphere_resonance(SPHERE["parameters"]["radius"], 36.0, "TE"))
    estimate = 34 / (5.0 * math.sqrt(38.0)) * (5.0 / 4.0 + 3.45) * 1e9   # Kajfez–Guillon
    result, _ = section_solve(PUCK, *REFERENCE_PUCK, 3, estimate)
    reference = min(result.modes, key=lambda m: abs(m.frequency_hz - estimate))
    study("puck eps_r 38, TE01δ", PUCK, reference.complex_frequency_hz)


if __name__ == "__main__":
    main()
