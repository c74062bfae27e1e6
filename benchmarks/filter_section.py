"""Benchmark: a two-resonator iris-coupled filter section, time to its coupling coefficient k
and the external Q of its end resonators.

The part (the fictional Larkspur Microwave Works' LMW-IF2F): two 22.86 x 10.16 x 18 mm
resonators, an 8 mm iris in their 2 mm common wall, and a 10 mm iris in each 2 mm end wall
into an 8 mm WR-90 feed ending in a matched TE10 port (builder ``iris_pair`` with
``feed_iris_width``). Two ways to the numbers, each timed from the mesh to the result:

- the half cut at the iris plane (``symmetry_z``), solved once with a magnetic (PMC) and once
  with an electric (PEC) wall there, each with its one port: k = (f_m² − f_e²)/(f_m² + f_e²)
  from the two classes (post.coupling), and Q_ext of the end resonator from each class (a
  class mode keeps its energy in the half's one resonator, so its Q is that resonator's
  Q_ext at its port; the two differ by the coupling's detuning);
- the whole section with both ports: k from its two lowest loaded modes, and per mode the
  ports' Q_ext together, 1/(1/Q_in + 1/Q_out) (each normal mode has half its energy in each
  resonator, so each port sees 2 Q_ext and both together Q_ext).

One BLAS/OpenMP thread (set before numpy loads): on the 2-vCPU reference machine extra
threads slowed the direct solvers. Wall-clock and CPU seconds are both printed: the reference
machine is shared, and its load shows in the first.

    python benchmarks/filter_section.py [mesh size in mm, default 3] [order, default 2]
"""

from __future__ import annotations

import os
import sys

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

PART = dict(width=0.02286, height=0.01016, length=0.018, iris_width=0.008,
            wall_thickness=0.002, feed_iris_width=0.010, feed_length=0.008)
NEAR_HZ = 10.6e9          # the single resonator's TE101, c/2 √(1/a² + 1/d²) (Pozar §6.3)


def _timed_half(kind: str, size: float, order: int):
    import time

    from femcav.geometry import build_part, symmetry_wall_name
    from femcav.materials import Material
    from femcav.model import make_model
    from femcav.ports.loaded_solve import solve_with_ports
    from femcav.walls import Wall

    t0, c0 = time.perf_counter(), time.process_time()
    mesh = build_part("iris_pair", mesh_size=size, symmetry=("z",), **PART)
    t_mesh = time.perf_counter() - t0
    model = make_model(mesh, {"inside": Material()},
                       {symmetry_wall_name("z"): Wall(kind), "feed_out": Wall("port")})
    result = solve_with_ports(model, modes=1, near_hz=NEAR_HZ, order=order)
    return result, t_mesh, time.perf_counter() - t0, time.process_time() - c0


def _timed_whole(size: float, order: int):
    import time

    from femcav.geometry import build_part
    from femcav.materials import Material
    from femcav.model import make_model
    from femcav.ports.loaded_solve import solve_with_ports
    from femcav.walls import Wall

    t0, c0 = time.perf_counter(), time.process_time()
    mesh = build_part("iris_pair", mesh_size=size, **PART)
    t_mesh = time.perf_counter() - t0
    model = make_model(mesh, {"inside": Material()},
                       {"feed_in": Wall("port"), "feed_out": Wall("port")})
    result = solve_with_ports(model, modes=2, near_hz=NEAR_HZ, order=order)
    return result, t_mesh, time.perf_counter() - t0, time.process_time() - c0


def main(size_mm: float = 3.0, order: int = 2) -> None:
    from femcav.post.coupling import coefficient

    size = size_mm * 1e-3
    print(f"LMW-IF2F (made-up part): mesh {size_mm:g} mm, order {order}, one BLAS thread")
    rows = []
    halves = {}
    for kind in ("pmc", "pec"):
        half, t_mesh, t_total, cpu = _timed_half(kind, size, order)
        (mode,) = half.modes
        halves[kind] = mode
        rows.append((f"half, {kind.upper()} iris plane", half.dofs, t_mesh, t_total, cpu,
                     mode.complex_frequency_hz, mode.loading.q_external["feed_out"]))
    result, t_mesh, t_total, cpu = _timed_whole(size, order)
    for mode in result.modes:
        q = mode.loading.q_external
        rows.append((f"whole, mode {mode.index}", result.dofs, t_mesh, t_total, cpu,
                     mode.complex_frequency_hz, 1 / (1 / q["feed_in"] + 1 / q["feed_out"])))
    print(f"{'model':<24}{'DOFs':>8}{'mesh s':>9}{'total s':>9}{'CPU s':>8}{'f (GHz)':>13}"
          f"{'Q (f)':>9}{'Q_ext':>9}")
    for name, dofs, t_m, t_t, cpu, f, q_ext in rows:
        print(f"{name:<24}{dofs:>8}{t_m:>9.1f}{t_t:>9.1f}{cpu:>8.1f}{f.real / 1e9:>13.6f}"
              f"{f.real / (2 * f.imag):>9.2f}{q_ext:>9.2f}")
    k_half = coefficient(halves["pmc"].frequency_hz, halves["pec"].frequency_hz)
    f1, f2 = (m.frequency_hz for m in result.modes)
    k_whole = coefficient(f2, f1)
    print(f"k (magnetic-wall class minus electric, post.coupling's sign): halves "
          f"{k_half:.5f}; whole section, modes 2 and 1: |k| = {abs(k_whole):.5f}")
    half_dofs = sum(r[1] for r in rows[:2])
    print(f"time to k and Q_ext (wall clock, CPU): halves {rows[0][3] + rows[1][3]:.1f} s, "
          f"{rows[0][4] + rows[1][4]:.1f} s ({half_dofs} DOFs in two solves); whole "
          f"{rows[2][3]:.1f} s, {rows[2][4]:.1f} s ({rows[2][1]} DOFs)")


if __name__ == "__main__":
    main(*(float(a) if i == 0 else int(a) for i, a in enumerate(sys.argv[1:])))
