"""Resonances of an empty circular cylinder cavity (pillbox) with perfectly conducting walls.

TM_nml: f = c/(2π) sqrt((p_nm / r)² + (lπ/L)²), l >= 0; TE_nml: p'_nm instead of p_nm, l >= 1;
p_nm and p'_nm are the m-th zeros of J_n and J_n' (from scipy.special). Modes with n >= 1
come as a degenerate pair (cos nφ and sin nφ). Source: D. M. Pozar, Microwave Engineering,
4th ed., §6.4 "Circular waveguide cavity resonators" (section number from memory).
"""

from __future__ import annotations

import math

from scipy.constants import c as C0
from scipy.special import jn_zeros, jnp_zeros


def pillbox_modes(radius: float, length: float, f_max: float, eps_r: float = 1.0
                  ) -> list[tuple[float, str]]:
    v = C0 / math.sqrt(eps_r)
    k_max = 2 * math.pi * f_max / v
    out = []
    n = 0
    while True:
        found = False
        for kind, zeros in (("TM", jn_zeros), ("TE", jnp_zeros)):
            m_count = int(k_max * radius / 2) + 3
            for m, p in enumerate(zeros(n, m_count), start=1):
                if p / radius > k_max:
                    break
                for l in range(0 if kind == "TM" else 1, int(k_max * length / math.pi) + 1):
                    k = math.hypot(p / radius, l * math.pi / length)
                    if k <= k_max:
                        found = True
                        for _ in range(2 if n else 1):
                            out.append((v * k / (2 * math.pi), f"{kind}{n}{m}{l}"))
        if not found:
            break
        n += 1
    return sorted(out)


def lowest_pillbox_frequencies(radius: float, length: float, count: int) -> list[float]:
    f_max = C0 / (2 * math.pi) * 4 / radius
    while True:
        modes = pillbox_modes(radius, length, f_max)
        if len(modes) > count:
            return [f for f, _ in modes[:count]]
        f_max *= 1.5


def pillbox_order_frequencies(radius: float, length: float, m: int, count: int) -> list[float]:
    """The lowest ``count`` frequencies (Hz) of azimuthal order m (TM_mnl and TE_mnl), each
    pair listed once: what a body-of-revolution solve at order m must find."""
    out = []
    for p in range(1, count + 1):
        tm, te = jn_zeros(m, p)[-1], jnp_zeros(m, p)[-1]
        for l in range(count + 1):
            out.append(math.hypot(tm / radius, l * math.pi / length))
            if l:
                out.append(math.hypot(te / radius, l * math.pi / length))
    return [C0 * k / (2 * math.pi) for k in sorted(out)[:count]]
