"""Resonances of a coaxial line shorted at both ends (inner radius a, outer b, length L).

TEM: f_p = p c / (2 L), p >= 1, whatever the radii (D. M. Pozar, Microwave Engineering,
4th ed., §6.2; from memory). TE11-type: the guide's TE11 cutoff k_c is the lowest root of
J1'(k a) Y1'(k b) - J1'(k b) Y1'(k a) = 0 (Pozar §3.5, from memory, where k_c ≈ 2/(a + b)
is given as its estimate), and the shorted line resonates at c/(2π) sqrt(k_c² + (pπ/L)²),
p >= 1. Roots from scipy.special with brentq.
"""

from __future__ import annotations

import math

from scipy.constants import c as C0
from scipy.optimize import brentq
from scipy.special import jvp, yvp


def coax_tem_frequencies(length: float, count: int) -> list[float]:
    return [p * C0 / (2 * length) for p in range(1, count + 1)]


def coax_te11_cutoff_k(outer: float, inner: float) -> float:
    """k_c (rad/m) of the coaxial TE11 mode; the estimate 2/(a + b) brackets it within 30 %."""
    def cross(k):
        return jvp(1, k * outer) * yvp(1, k * inner) - jvp(1, k * inner) * yvp(1, k * outer)
    guess = 2 / (outer + inner)
    return brentq(cross, 0.7 * guess, 1.3 * guess, xtol=1e-14 * guess)


def coax_te11p_frequencies(outer: float, inner: float, length: float, count: int
                           ) -> list[float]:
    kc = coax_te11_cutoff_k(outer, inner)
    return [C0 / (2 * math.pi) * math.hypot(kc, p * math.pi / length)
            for p in range(1, count + 1)]
