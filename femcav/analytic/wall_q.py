"""Wall Q factors of empty cavities with walls of finite conductivity σ, by the usual
perturbation of the lossless fields: Q = ω W / P_wall, P_wall = (R_s/2) ∮ |H_t|² dS,
R_s = sqrt(ω μ0 / (2σ)) (D. M. Pozar, Microwave Engineering, 4th ed., §1.7 and §6.1;
common practice). Each at the closed-form frequency of its mode.
"""

from __future__ import annotations

import math

from scipy.constants import c as C0
from scipy.constants import epsilon_0, mu_0
from scipy.special import jn_zeros, jnp_zeros

ETA0 = math.sqrt(mu_0 / epsilon_0)


def _rs(frequency_hz: float, sigma: float) -> float:
    return math.sqrt(2 * math.pi * frequency_hz * mu_0 / (2 * sigma))


def box_te10l_q_wall(a: float, b: float, d: float, l: int, sigma: float) -> float:
    """TE_10l of an empty a x b x d box, all six walls of σ: Pozar §6.3, eq. (6.46) (from
    memory), Q = (k a d)³ b η / (2π² R_s) / (2 l² a³ b + 2 b d³ + l² a³ d + a d³)."""
    k = math.pi * math.hypot(1 / a, l / d)
    rs = _rs(C0 * k / (2 * math.pi), sigma)
    return (k * a * d) ** 3 * b * ETA0 / (2 * math.pi**2 * rs) / (
        2 * l**2 * a**3 * b + 2 * b * d**3 + l**2 * a**3 * d + a * d**3)


def pillbox_tm010_q_wall(radius: float, length: float, sigma: float) -> float:
    """Q = p01 η d / (2 R_s (a + d)): from E_z = J0(p01 r/a), H_φ ∝ J1 (Pozar §6.4; the
    integrals are common practice)."""
    p01 = jn_zeros(0, 1)[0]
    rs = _rs(C0 * p01 / (2 * math.pi * radius), sigma)
    return p01 * ETA0 * length / (2 * rs * (radius + length))


def pillbox_te011_q_wall(radius: float, length: float, sigma: float) -> float:
    """TE_0nl at n = l = 1: Q = (ka)³ η a d / (4 p'² R_s) / (a d / 2 + (β a² / p')²),
    p' = p'_01, β = π/d (Pozar §6.4, the TE_nml formula at n = 0; from memory, and
    re-derived from E_φ = J1(p' r / a) sin βz)."""
    p1 = jnp_zeros(0, 1)[0]
    beta = math.pi / length
    k = math.hypot(p1 / radius, beta)
    rs = _rs(C0 * k / (2 * math.pi), sigma)
    return ((k * radius) ** 3 * ETA0 * radius * length / (4 * p1**2 * rs)
            / (radius * length / 2 + (beta * radius**2 / p1) ** 2))
