"""TE_m0p resonances of a rectangular cavity whose permittivity varies along x only.

For fields E = E_y(x) sin(pπz/d) ŷ in 0 <= x <= a, 0 <= z <= d with eps_r = eps_r(x), Maxwell's
equations reduce to the Sturm-Liouville problem

    -E_y'' + β² E_y = k0² eps_r(x) E_y,   E_y(0) = E_y(a) = 0,   β = pπ/d,

(∇·(εE) = ∂_y(ε E_y) = 0 holds because nothing varies with y). We solve it independently of
the finite-element code by shooting: integrate from x = 0 with E_y = 0, E_y' = 1 using scipy's
solve_ivp (DOP853, rtol 1e-12) and find the k0 where E_y(a) = 0 with brentq. The n-th root
is the n-th eigenvalue (Sturm oscillation: the n-th eigenfunction has n - 1 interior zeros).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy.constants import c as C0
from scipy.integrate import solve_ivp
from scipy.optimize import brentq


def _end_value(k0: float, eps: Callable[[float], float], a: float, beta: float,
               rtol: float = 1e-12) -> float:
    def rhs(x, u):
        return [u[1], (beta**2 - k0**2 * eps(x)) * u[0]]
    sol = solve_ivp(rhs, (0.0, a), [0.0, 1.0], method="DOP853", rtol=rtol, atol=1e-14 * a)
    return float(sol.y[0, -1])


def graded_te_m0p_frequencies(eps: Callable[[float], float], a: float, d: float, p: int,
                              count: int, eps_min: float, eps_max: float) -> list[float]:
    """The lowest ``count`` resonance frequencies (Hz); eps_min/eps_max bound eps_r(x)."""
    beta = p * math.pi / d
    k_lo = beta / math.sqrt(eps_max)
    k_hi = math.hypot((count + 1) * math.pi / a, beta) / math.sqrt(eps_min)
    roots = shooting_roots(_end_value, (eps, a, beta), k_lo, k_hi, count)
    return [C0 * k / (2 * math.pi) for k in roots]


def shooting_roots(end_value, args: tuple, k_lo: float, k_hi: float, count: int) -> list[float]:
    """The lowest ``count`` zeros of ``end_value(k, *args)`` in (k_lo, k_hi): brackets from a
    grid with a looser tolerance (only signs matter there; ``end_value`` takes ``rtol``),
    each refined with brentq at the tight one."""
    grid = np.linspace(k_lo, k_hi, 60 * (count + 1))
    values = [end_value(k, *args, rtol=1e-7) for k in grid]
    roots = []
    for k1, k2, v1, v2 in zip(grid[:-1], grid[1:], values[:-1], values[1:]):
        if v1 * v2 < 0:
            roots.append(brentq(end_value, k1, k2, args=args, xtol=1e-14 * k2, rtol=1e-14))
            if len(roots) == count:
                break
    return roots
