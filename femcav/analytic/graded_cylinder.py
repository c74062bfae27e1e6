"""TE_0nl resonances of a pillbox whose permittivity varies with the radius only.

For E = E_φ(r) sin(lπz/d) φ̂ in 0 <= r <= a, 0 <= z <= d with eps_r = eps_r(r) (∇·(εE) = 0
because nothing varies with φ), the curl-curl equation reduces to

    (1/r) (r E_φ')' - E_φ / r² + (k0² eps_r(r) - β²) E_φ = 0,   E_φ(0) = E_φ(a) = 0,

β = lπ/d. We solve it independently of the finite-element code by shooting: with y1 = E_φ,
y2 = r E_φ', integrate y1' = y2 / r, y2' = y1 / r - r (k0² eps_r - β²) y1 from r0 = 1e-7 a,
where E_φ = r to within (k r0)² (the regular solution), using scipy's solve_ivp (DOP853,
rtol 1e-12), and find the k0 where E_φ(a) = 0 with brentq. The n-th root is the n-th mode
(Sturm oscillation).
"""

from __future__ import annotations

import math
from collections.abc import Callable

from scipy.constants import c as C0
from scipy.integrate import solve_ivp

from .graded import shooting_roots


def _end_value(k0: float, eps: Callable[[float], float], a: float, beta: float,
               rtol: float = 1e-12) -> float:
    r0 = 1e-7 * a

    def rhs(r, y):
        return [y[1] / r, y[0] / r - r * (k0**2 * eps(r) - beta**2) * y[0]]
    sol = solve_ivp(rhs, (r0, a), [r0, r0], method="DOP853", rtol=rtol, atol=1e-16 * a)
    return float(sol.y[0, -1])


def graded_pillbox_te0nl_frequencies(eps: Callable[[float], float], a: float, d: float,
                                     l: int, count: int, eps_min: float, eps_max: float
                                     ) -> list[float]:
    """The lowest ``count`` TE_0nl frequencies (Hz) for one l; eps_min/eps_max bound eps_r."""
    beta = l * math.pi / d
    k_lo = beta / math.sqrt(eps_max)
    k_hi = math.hypot((count + 1.5) * math.pi / a, beta) / math.sqrt(eps_min)
    roots = shooting_roots(_end_value, (eps, a, beta), k_lo, k_hi, count)
    return [C0 * k / (2 * math.pi) for k in roots]
