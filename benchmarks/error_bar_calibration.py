"""Calibration of the error bars: coverage and tightness on frequencies and every Q.

Each case is solved with error bars (three meshes, femcav.runner.solve_with_error_bars) and
every barred quantity is set beside a reference (femcav.bar_calibration): closed forms for
the empty box, pillbox and shorted coax (Pozar, Microwave Engineering, 4th ed., §6.3, §6.4,
§6.2 and §3.5, from memory; Bessel zeros and roots from scipy), and for the dielectric
resonator and the re-entrant cavity a converged solve on the (r, z) section at order 3 on a
fine mesh (errors below 1e-6 there: README, "Bodies of revolution"), computed at run time.

    python benchmarks/error_bar_calibration.py [--quick] [--cases box_h1,pillbox_3d,...]

Prints one line per sample (case, mode, quantity, raw, bar, true error, bar/error) and the
summary by quantity: coverage, median bar / true error, median extrapolated / raw error.
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import tempfile
import time
from pathlib import Path

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from scipy.constants import c as C0, mu_0  # noqa: E402

from femcav.analytic.box import box_modes  # noqa: E402
from femcav.analytic.coax import coax_te11p_frequencies, coax_tem_frequencies  # noqa: E402
from femcav.analytic.cylinder import pillbox_modes  # noqa: E402
from femcav.analytic.wall_q import (  # noqa: E402
    box_te10l_q_wall, pillbox_te011_q_wall, pillbox_tm010_q_wall)
from femcav.bar_calibration import (  # noqa: E402
    FREQUENCY, Reference, samples, solve_text, summary_lines)

SIGMA = 58e6
MM = 1e-3
METAL = 'kind = "metal"\nconductivity = "58 MS/m"\n'


def metal(*walls: str) -> str:
    return "".join(f"[walls.{w}]\n{METAL}" for w in walls)


def box_references(a, b, d, count):
    out = []
    for f, label in box_modes(a, b, d, 3 * C0 / min(a, d))[:count]:
        q = {}
        if label.startswith("TE10"):
            q["q_wall"] = box_te10l_q_wall(a, b, d, int(label[4:]), SIGMA)
        out.append(Reference(f, q))
    return out


def pillbox_references(radius, length, count, per_order=False):
    out = []
    for f, label in pillbox_modes(radius, length, 3 * C0 / radius)[:count * 2]:
        m = int(label[2])
        q = {}
        if label == "TM010":
            q["q_wall"] = pillbox_tm010_q_wall(radius, length, SIGMA)
        elif label == "TE011":
            q["q_wall"] = pillbox_te011_q_wall(radius, length, SIGMA)
        if per_order and out and m and out[-1].m == m and out[-1].frequency_hz == f:
            continue        # a section lists each cos/sin pair once
        out.append(Reference(f, q, m if per_order else None))
    out.sort(key=lambda r: r.frequency_hz)
    return out[:count]


def coax_tem_q_wall(outer, inner, length, p):
    """TEM_p of a shorted coaxial line, all walls of σ: H_φ = I cos(pπz/L) / (2πr) gives
    W = μ0 I² L ln(b/a) / (8π), P = R_s I² [L (1/a + 1/b) / (8π) + ln(b/a) / (2π)] (the
    side walls and both end discs), Q = ωW/P (our derivation, Pozar §6.1's method)."""
    f = p * C0 / (2 * length)
    rs = math.sqrt(math.pi * f * mu_0 / SIGMA)
    ln = math.log(outer / inner)
    return 2 * math.pi * f * mu_0 * ln * length / (
        rs * (length * (1 / inner + 1 / outer) + 4 * ln))


def coax_references(outer, inner, length, per_order):
    tem = [Reference(f, {"q_wall": coax_tem_q_wall(outer, inner, length, p + 1)},
                     0 if per_order else None)
           for p, f in enumerate(coax_tem_frequencies(length, 4))]
    te11 = coax_te11p_frequencies(outer, inner, length, 2)
    pairs = [Reference(f, {}, 1 if per_order else None) for f in te11
             for _ in range(1 if per_order else 2)]
    return sorted(tem + pairs, key=lambda r: r.frequency_hz)[:6 if per_order else 8]


# --- the converged references of the parts without closed forms ---------------------------

DR_GEOMETRY = ('[geometry]\nbuilder = "dr_fixture"\nshield_radius = "12 mm"\n'
               'shield_height = "12 mm"\npuck_radius = "5 mm"\npuck_height = "4 mm"\n'
               'puck_hole_radius = "1 mm"\nsupport_radius = "3 mm"\nsupport_height = "3 mm"\n'
               '[regions.puck]\neps_r = 24.0\ntan_delta = 1e-4\n'
               '[regions.support]\neps_r = 2.1\ntan_delta = 3e-4\n'
               + metal("side", "bottom", "top"))
REENTRANT_GEOMETRY = ('[geometry]\nbuilder = "coax"\nouter_radius = "10 mm"\n'
                      'inner_radius = "4 mm"\nlength = "15 mm"\ngap = "0.8 mm"\n'
                      + metal("outer", "inner", "bottom", "top"))


def converged(geometry: str, orders, modes: int, size_mm: float, folder: Path):
    """The section solved at order 3 on a fine mesh, without bars: the reference modes."""
    from femcav.case import case_from_data
    from femcav.runner import solve_case
    import tomllib

    text = (geometry + f'[mesh]\nsize = "{size_mm} mm"\n[solve]\nmodes = {modes}\norder = 3\n'
            f'azimuthal_orders = {list(orders)}\nform = "H"\n')
    case = case_from_data(tomllib.loads(text), folder / "reference.toml")
    result = solve_case(case, case.solve)
    return [Reference(m.frequency_hz,
                      {k: getattr(m.losses, k) for k in ("q_wall", "q_dielectric")
                       if m.losses and getattr(m.losses, k) is not None}, m.m)
            for m in result.modes]


def as_3d(references):
    """The 3D spectrum of section references: every m >= 1 mode twice, no order."""
    return sorted((Reference(r.frequency_hz, r.q) for r in references
                   for _ in range(2 if r.m else 1)), key=lambda r: r.frequency_hz)


# --- the calibration set ------------------------------------------------------------------

def box_case(order, size_mm, form="H"):
    a, b, d = 22.86 * MM, 10.16 * MM, 30 * MM
    text = ('[geometry]\nbuilder = "box"\nwidth = "22.86 mm"\nheight = "10.16 mm"\n'
            f'length = "30 mm"\n[mesh]\nsize = "{size_mm} mm"\n'
            + metal("x_min", "x_max", "y_min", "y_max", "z_min", "z_max")
            + f'[solve]\nmodes = 6\norder = {order}\nform = "{form}"\n')
    return text, lambda folder: box_references(a, b, d, 6)


def pillbox_case(order, size_mm, section, form="H", curved=False):
    text = ('[geometry]\nbuilder = "pillbox"\nradius = "10 mm"\nlength = "15 mm"\n'
            f'[mesh]\nsize = "{size_mm} mm"\n' + ("curved = true\n" if curved else "")
            + metal("side", "bottom", "top")
            + f'[solve]\nmodes = 6\norder = {order}\nform = "{form}"\n'
            + ("azimuthal_orders = [0, 1, 2]\n" if section else ""))
    return text, lambda folder: pillbox_references(10 * MM, 15 * MM, 6, per_order=section)


def coax_case(order, size_mm, section):
    text = ('[geometry]\nbuilder = "coax"\nouter_radius = "10 mm"\ninner_radius = "3 mm"\n'
            f'length = "60 mm"\n[mesh]\nsize = "{size_mm} mm"\n'
            + metal("outer", "inner", "bottom", "top")
            + f'[solve]\nmodes = 6\norder = {order}\nform = "H"\n'
            + ("azimuthal_orders = [0, 1]\n" if section else ""))
    return text, lambda folder: coax_references(10 * MM, 3 * MM, 60 * MM, section)


def section_referenced_case(geometry, orders, modes, order, size_mm, section,
                            reference_size_mm, mesh_extra=""):
    """A part without a closed form, against its converged section (3D: both members of
    every m >= 1 pair)."""
    text = (geometry + f'[mesh]\nsize = "{size_mm} mm"\n{mesh_extra}'
            f'[solve]\nmodes = {modes}\norder = {order}\nform = "H"\n'
            + (f"azimuthal_orders = {list(orders)}\n" if section else ""))

    def references(folder):
        refs = converged(geometry, orders, modes + 2, reference_size_mm, folder)
        return refs if section else as_3d(refs)[:modes]
    return text, references


def dr_case(order, size_mm, section):
    return section_referenced_case(DR_GEOMETRY, (0, 1, 2), 6, order, size_mm, section, 0.5)


def reentrant_case(order, size_mm, section):
    return section_referenced_case(REENTRANT_GEOMETRY, (0, 1), 3, order, size_mm, section,
                                   0.3, mesh_extra="edge_refinement = 0.5\n")


CASES = {
    "box_h1": lambda: box_case(1, 4.0),
    "box_e1": lambda: box_case(1, 4.0, form="E"),
    "box_h2": lambda: box_case(2, 4.0),
    "pillbox_3d_h1": lambda: pillbox_case(1, 2.5, section=False),
    "pillbox_3d_h2_curved": lambda: pillbox_case(2, 4.0, section=False, curved=True),
    "pillbox_section_h2": lambda: pillbox_case(2, 3.0, section=True),
    "coax_section_h2": lambda: coax_case(2, 3.0, section=True),
    "coax_3d_h1": lambda: coax_case(1, 3.0, section=False),
    "dr_section_h2": lambda: dr_case(2, 1.5, section=True),
    "dr_3d_h1": lambda: dr_case(1, 2.0, section=False),
    "reentrant_section_h2": lambda: reentrant_case(2, 1.0, section=True),
    "reentrant_3d_h1": lambda: reentrant_case(1, 1.5, section=False),
}
QUICK = ("box_h1", "pillbox_section_h2", "coax_section_h2", "dr_section_h2",
         "reentrant_section_h2")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="the section cases and one box")
    parser.add_argument("--cases", default="", help="comma-separated names (default: all)")
    args = parser.parse_args()
    names = (args.cases.split(",") if args.cases else QUICK if args.quick else list(CASES))
    everything = []
    print(f"{'case':<22}{'mode':>5}  {'quantity':<13}{'raw':>15}{'bar':>11}{'true error':>12}"
          f"{'bar/error':>10}{'extrap./raw':>12}")
    for name in names:
        text, references = CASES[name]()
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            result = solve_text(text, Path(tmp))
            found = samples(name, result, references(Path(tmp)))
        for s in found:
            bar = math.nan if s.bar is None else s.bar
            gain = (abs(s.extrapolated - s.reference) / s.error
                    if s.extrapolated is not None and s.error > 0 else math.nan)
            unit = 1e-6 if s.quantity == FREQUENCY else 1.0
            print(f"{name:<22}{s.mode:>5}  {s.quantity:<13}{s.computed * unit:>15.6f}"
                  f"{bar * unit:>11.4g}{s.error * unit:>12.4g}"
                  f"{bar / s.error if s.error else math.inf:>10.2f}{gain:>12.2f}"
                  + ("" if s.inside else "  OUTSIDE"))
        print(f"# {name}: {time.perf_counter() - t0:.1f} s", flush=True)
        everything += found
    print()
    print("\n".join(summary_lines(everything)))
    print()
    print("\n".join(summary_lines(everything, key=lambda s: s.case)))


if __name__ == "__main__":
    main()
