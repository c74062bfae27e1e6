"""Benchmark: the axisymmetric solver against closed forms and against the 3D solver.

1. Pillbox r = 10 mm, l = 15 mm, TM010 alone (m = 0, one mode), order 3: error against
   p01 c / (2π a) (Pozar, Microwave Engineering, 4th ed., §6.4, from memory) and the wall
   time from meshing the section to the checked mode. Target: 1e-8 in under 10 s.
2. The same pillbox, its 10 lowest modes (a mode with m >= 1 counts twice, as in 3D: the
   cos/sin pair), against the Bessel-zero formulas, for the axisymmetric solver (orders
   m = 0 to 3) and for the 3D solver (order 3, curved tetrahedra, PARDISO where installed)
   at a similar accuracy.
3. The DR fixture of benchmarks/scale.py (a made-up part), 5 lowest modes: axisymmetric
   against 3D (order 2, curved, error bars from three meshes); the 3D result with its bar
   should contain the axisymmetric one.

One BLAS/OpenMP/MKL thread (set below, before numpy loads).

    python benchmarks/axisymmetric.py
"""

from __future__ import annotations

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

import math
import time
from functools import partial

import numpy as np
from scipy.constants import c
from scipy.special import jn_zeros

from femcav.analytic.cylinder import lowest_pillbox_frequencies
from femcav.axisymmetric.model import make_axisymmetric_model
from femcav.axisymmetric.solve import solve_axisymmetric
from femcav.geometry import BUILDERS, build_part
from femcav.geometry.parts import Sizing
from femcav.geometry.section import mesh_section
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import solve_model

A, D = 0.010, 0.015
DR = {"shield_radius": 0.012, "shield_height": 0.016, "puck_radius": 0.005, "puck_height": 0.004,
          "support_radius": 0.0025, "support_height": 0.004}
DR_MATERIALS = {"air": Material(), "puck": Material(eps_r=30.0), "support": Material(eps_r=2.1)}


def axisymmetric(builder, params, materials, size, orders, modes, order=3):
    t0 = time.perf_counter()
    section = mesh_section(BUILDERS[builder].layout(**{**_defaults(builder), **params}),
                           Sizing(size=size))
    model = make_axisymmetric_model(section, materials, {})
    result = solve_axisymmetric(model, orders=orders, modes=modes, order=order)
    return result, time.perf_counter() - t0


def _defaults(builder):
    return {k: p.default for k, p in BUILDERS[builder].PARAMETERS.items() if not p.required}


def expanded(result, count):
    """Frequencies as the 3D solver lists them: every m >= 1 mode twice."""
    out = sorted(f for m in result.modes for f in [m.frequency_hz] * m.multiplicity)
    return np.array(out[:count])


def tm010() -> None:
    exact = jn_zeros(0, 1)[0] * c / (2 * math.pi * A)
    print("1. pillbox TM010 alone (m = 0, order 3)")
    for size in (0.004, 0.002, 0.0015):
        result, seconds = axisymmetric("pillbox", {"radius": A, "length": D}, {"inside":
                                       Material()}, size, (0,), 1)
        error = abs(result.modes[0].frequency_hz / exact - 1)
        print(f"   h = {size * 1e3:4.1f} mm  DOFs {result.dofs:6d}  error {error:.1e}  "
              f"wall time {seconds:5.2f} s  checks {'ok' if result.passed else 'FAILED'}")


def pillbox_ten() -> None:
    exact = np.array(lowest_pillbox_frequencies(A, D, 10))
    print("2. pillbox, 10 lowest modes (pairs counted twice), largest relative error")
    for size in (0.004, 0.002, 0.001):
        result, seconds = axisymmetric("pillbox", {"radius": A, "length": D}, {"inside":
                                       Material()}, size, (0, 1, 2, 3), 10)
        error = np.max(np.abs(expanded(result, 10) / exact - 1))
        print(f"   axisymmetric  h = {size * 1e3:4.1f} mm  DOFs {result.dofs:7d}  "
              f"error {error:.1e}  wall time {seconds:6.2f} s")
    for size in (0.004, 0.0025):
        t0 = time.perf_counter()
        mesh = build_part("pillbox", radius=A, length=D, mesh_size=size, curved=True)
        result = solve_model(make_model(mesh, {"inside": Material()}, {}), modes=10, order=3)
        seconds = time.perf_counter() - t0
        freqs = np.array([m.frequency_hz for m in result.modes])
        error = np.max(np.abs(freqs / exact - 1))
        print(f"   3D order 3    h = {size * 1e3:4.1f} mm  DOFs {result.dofs:7d}  "
              f"error {error:.1e}  wall time {seconds:6.2f} s")


def dr_fixture() -> None:
    from femcav.error_bars import estimate_errors
    from femcav.post.singularity import bar_rate

    print("3. DR fixture, 5 lowest modes")
    result, seconds = axisymmetric("dr_fixture", DR, DR_MATERIALS, 0.0006, (0, 1, 2), 5)
    reference, _ = axisymmetric("dr_fixture", DR, DR_MATERIALS, 0.0003, (0, 1, 2), 5)
    change = np.max(np.abs(expanded(result, 5) / expanded(reference, 5) - 1))
    print(f"   axisymmetric h = 0.6 mm, DOFs {result.dofs}, wall time {seconds:.2f} s, "
          f"largest change to h = 0.3 mm {change:.1e}")
    axi = expanded(reference, 5)

    def build(size):
        mesh = build_part("dr_fixture", **DR, mesh_size=size, curved=True)
        return make_model(mesh, DR_MATERIALS, {})

    t0 = time.perf_counter()
    sizes = [0.0016 * 1.35**2, 0.0016 * 1.35, 0.0016]
    estimated = estimate_errors(build, sizes, modes=5, order=2,
                                order_rate=partial(bar_rate, order=2))
    seconds = time.perf_counter() - t0
    print(f"   3D order 2, three meshes to {sizes[-1] * 1e3:.1f} mm "
          f"({estimated.finest.dofs} DOFs), wall time {seconds:.1f} s")
    for mode, bar, f_axi in zip(estimated.finest.modes, estimated.estimates, axi):
        inside = abs(mode.frequency_hz - f_axi) <= bar.error_estimate_hz
        print(f"   3D {mode.frequency_hz / 1e9:.6f} GHz ± {bar.error_estimate_hz / 1e6:.3f} MHz"
              f"  axisymmetric {f_axi / 1e9:.6f} GHz  "
              f"{'inside the bar' if inside else 'OUTSIDE the bar'}")


if __name__ == "__main__":
    tm010()
    pillbox_ten()
    dr_fixture()
