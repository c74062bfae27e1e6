"""Resonances of an empty rectangular cavity with perfectly conducting walls.

f = (c / 2) sqrt((m/a)² + (n/b)² + (l/d)²) / sqrt(eps_r mu_r); TE_mnl needs (m, n) != (0, 0)
and l >= 1, TM_mnl needs m, n >= 1 (any l >= 0). Source: D. M. Pozar, Microwave Engineering,
4th ed., §6.3 "Rectangular waveguide cavity resonators" (section number from memory).
Here the TE/TM labels are with respect to z, the d axis.
"""

from __future__ import annotations

import math

from scipy.constants import c as C0


def box_modes(a: float, b: float, d: float, f_max: float, eps_r: float = 1.0,
              mu_r: float = 1.0) -> list[tuple[float, str]]:
    """All modes below ``f_max`` as (frequency in Hz, label), sorted, degeneracies repeated."""
    v = C0 / math.sqrt(eps_r * mu_r)
    limit = 2 * f_max / v
    out = []
    for m in range(int(limit * a) + 1):
        for n in range(int(limit * b) + 1):
            for l in range(int(limit * d) + 1):
                f = 0.5 * v * math.sqrt((m / a) ** 2 + (n / b) ** 2 + (l / d) ** 2)
                if f > f_max:
                    continue
                if (m or n) and l >= 1:
                    out.append((f, f"TE{m}{n}{l}"))
                if m and n:
                    out.append((f, f"TM{m}{n}{l}"))
    return sorted(out)


def lowest_box_frequencies(a: float, b: float, d: float, count: int, **material) -> list[float]:
    f_max = 0.5 * C0 * math.sqrt(1 / a**2 + 1 / b**2 + 1 / d**2)
    while True:
        modes = box_modes(a, b, d, f_max, **material)
        if len(modes) > count:
            return [f for f, _ in modes[:count]]
        f_max *= 1.5
