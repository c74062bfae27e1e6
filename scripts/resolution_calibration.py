"""Measure the frequency error of box modes against their points per wavelength, to set
femcav.post.resolution.MIN_POINTS_PER_WAVELENGTH (closed form: D. M. Pozar, Microwave
Engineering, 4th ed., §6.3). Prints, per element order, the largest relative error of the
modes at or above each candidate threshold.

    python scripts/resolution_calibration.py [--quick]
"""

from __future__ import annotations

import sys

import numpy as np

from femcav import Material, make_model, solve_model
from femcav.analytic.box import lowest_box_frequencies
from femcav.geometry import build_part

A, B, D = 0.02286, 0.01016, 0.030
CANDIDATES = (1.2, 1.4, 1.6, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0)


def measure(order: int, size: float, modes: int) -> list[tuple[float, float]]:
    model = make_model(build_part("box", width=A, height=B, length=D, mesh_size=size), {"inside": Material()}, {})
    result = solve_model(model, modes=modes, form="E", order=order)
    exact = lowest_box_frequencies(A, B, D, len(result.modes))
    return [(m.resolution.points_per_wavelength, abs(m.frequency_hz / f - 1))
            for m, f in zip(result.modes, exact)]


def main() -> None:
    quick = "--quick" in sys.argv
    plans = {1: [(0.004, 300), (0.003, 300), (0.002, 200)],
             2: [(0.006, 300), (0.004, 400)],
             3: [(0.008, 300), (0.006, 400)]}
    for order, runs in plans.items():
        data = []
        for size, modes in runs[:1] if quick else runs:
            data += measure(order, size, modes)
        ppw, err = np.array(data).T
        print(f"order {order}: {len(data)} modes, points per wavelength "
              f"{ppw.min():.2g} to {ppw.max():.2g}; error x (points per wavelength)^{2 * order}: "
              f"largest {np.max(err * ppw ** (2 * order)):.3g}, "
              f"95th percentile {np.percentile(err * ppw ** (2 * order), 95):.3g}")
        for t in CANDIDATES:
            above = ppw >= t
            if above.any():
                print(f"  >= {t:4.1f} per wavelength: {above.sum():4d} modes, largest error "
                      f"{err[above].max():.2%}, median {np.median(err[above]):.2%}")


if __name__ == "__main__":
    main()
