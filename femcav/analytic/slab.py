"""TE_m0p resonances of a rectangular cavity with a dielectric slab against one side wall.

The cavity is 0 <= x <= a, 0 <= y <= b, 0 <= z <= d with PEC walls; a slab of relative
permittivity eps_r fills 0 <= x <= t over the full height and length. Fields with E = E_y(x)
sin(pπz/d) ŷ satisfy, with β = pπ/d, k_d² = eps_r k0² - β² and k_a² = k0² - β²,

    k_d tan(k_a (a - t)) + k_a tan(k_d t) = 0,

the transverse resonance condition of the partially loaded guide (D. M. Pozar, Microwave
Engineering, 4th ed., §3.3, "TE_m0 modes of a partially loaded waveguide"; closed with end
walls as in §6.3; section numbers from memory). We solve it in the pole-free form
C(k_d, t) S(k_a, a-t) + S(k_d, t) C(k_a, a-t) = 0 with S(k, s) = sin(ks)/k, C = cos(ks),
which stays real and smooth when k_a² < 0 (evanescent air gap), using scipy's brentq.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import c as C0
from scipy.optimize import brentq


def _s(k2: float, s: float) -> float:
    if k2 > 0:
        k = math.sqrt(k2)
        return math.sin(k * s) / k
    if k2 < 0:
        q = math.sqrt(-k2)
        return math.sinh(q * s) / q
    return s


def _c(k2: float, s: float) -> float:
    if k2 >= 0:
        return math.cos(math.sqrt(k2) * s)
    return math.cosh(math.sqrt(-k2) * s)


def slab_condition(k0: float, a: float, t: float, eps_r: float, beta: float) -> float:
    kd2, ka2 = eps_r * k0**2 - beta**2, k0**2 - beta**2
    return _c(kd2, t) * _s(ka2, a - t) + _s(kd2, t) * _c(ka2, a - t)


def slab_te_m0p_frequencies(a: float, t: float, d: float, eps_r: float, p: int, count: int
                            ) -> list[float]:
    """The lowest ``count`` TE_m0p resonance frequencies (Hz) for the given p >= 1."""
    beta = p * math.pi / d
    k_lo = beta / math.sqrt(eps_r) * (1 + 1e-12)  # below this no field fits in x
    roots, grid = [], np.linspace(k_lo, k_lo + (count + 2) * math.pi / a * 2 + beta, 20000)
    values = [slab_condition(k, a, t, eps_r, beta) for k in grid]
    for k1, k2, v1, v2 in zip(grid[:-1], grid[1:], values[:-1], values[1:]):
        if v1 == 0 or v1 * v2 < 0:
            roots.append(brentq(slab_condition, k1, k2, args=(a, t, eps_r, beta), xtol=1e-14,
                                rtol=1e-15))
            if len(roots) == count:
                break
    return [C0 * k / (2 * math.pi) for k in roots]


def slab_filling_factor(k0: float, a: float, t: float, eps_r: float, beta: float) -> float:
    """Share of the electric energy inside the slab for the TE_m0p mode at k0.

    E_y = A sin(k_d x) in the slab and B sin(k_a (a - x)) in the air, with A sin(k_d t) =
    B sin(k_a (a - t)) (continuity of E_y); the z dependence is common to both and cancels.
    W_e,slab / W_e = eps_r I_d / (eps_r I_d + I_a), I = ∫ E_y² dx in closed form.
    """
    kd2, ka2 = eps_r * k0**2 - beta**2, k0**2 - beta**2

    def sin_sq_integral(k2: float, s: float) -> float:   # ∫_0^s sin²(k x) dx / k² ... scaled
        # with S(k, x) = sin(kx)/k: ∫_0^s S² dx, real for k² of either sign
        if k2 > 0:
            k = math.sqrt(k2)
            return (s / 2 - math.sin(2 * k * s) / (4 * k)) / k2
        q = math.sqrt(-k2)
        return (math.sinh(2 * q * s) / (4 * q) - s / 2) / (-k2)

    # Amplitudes of S(k_d, x) and S(k_a, a - x) that match at x = t.
    amp_d, amp_a = _s(ka2, a - t), _s(kd2, t)
    slab = eps_r * amp_d**2 * sin_sq_integral(kd2, t)
    air = amp_a**2 * sin_sq_integral(ka2, a - t)
    return slab / (slab + air)
