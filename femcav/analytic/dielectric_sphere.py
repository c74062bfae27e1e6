"""Complex resonances of a dielectric sphere in free space (an open resonator).

The modes are the complex roots x = k0 a of the characteristic equations of the
spherical-wave expansion (Stratton, Electromagnetic Theory, 1941, §9.22-9.25; Gastine,
Courtois and Dormann, IEEE T-MTT 15(12), 1967). With time dependence e^{jωt} the field
outside is an outgoing spherical Hankel function h_n^(2)(k0 r), inside a regular j_n(k1 r),
k1 = sqrt(eps_r) k0, mu_r = 1. With the Riccati ratio ψ(z) = [z f(z)]' / f(z) of f = j_n or
h_n^(2), continuity of the tangential E and H at r = a gives

    TE:  ψ_j(k1 a) = ψ_h(k0 a),      TM:  ψ_j(k1 a) / eps_r = ψ_h(k0 a).

(For TE, E = f(r) X_nm: E_t ∝ f and H_t ∝ (1/μ)(1/r) d(r f)/dr; for TM the roles of E and H
swap and 1/ε takes the place of 1/μ.) The roots have Im x > 0, a decaying mode for e^{jωt};
f = c x / (2π a) and Q = Re f / (2 Im f) (Pozar, Microwave Engineering, 4th ed., §6.1).
Found with scipy.special's complex spherical Bessel functions and scipy.optimize.root on the
real and imaginary parts.

Starting values of k1 a: the high-eps_r limits of the equations. There x0 = k0 a is small and
ψ_h(x0) -> -n (h_n ~ z^-(n+1)), while ψ_j(x1) = x1 j_(n-1)(x1) / j_n(x1) - n (the recurrence
[z j_n]' = z j_(n-1) - n j_n). So TE_n starts near a zero of j_(n-1) (π for n = 1, 4.493 for
n = 2) and TM_n, where ψ_j ≈ -n eps_r is large, near a zero of j_n (4.493 for n = 1). Zeros
from Abramowitz and Stegun, Table 10.6 (from memory); the root finder then moves them.
"""

from __future__ import annotations

import math

from scipy.constants import c as C0
from scipy.optimize import root
from scipy.special import spherical_jn, spherical_yn

STARTS = {("TE", 1): math.pi, ("TE", 2): 4.493, ("TM", 1): 4.493}


def _riccati_ratio(n: int, z, outgoing: bool):
    f, df = spherical_jn(n, z), spherical_jn(n, z, derivative=True)
    if outgoing:   # h^(2) = j - i y
        f, df = f - 1j * spherical_yn(n, z), df - 1j * spherical_yn(n, z, derivative=True)
    return (f + z * df) / f


def mismatch(x0: complex, eps_r: float, kind: str, n: int) -> complex:
    """The characteristic function of the TE or TM modes of order n at x0 = k0 a."""
    inner = _riccati_ratio(n, math.sqrt(eps_r) * x0, False)
    return (inner / eps_r if kind == "TM" else inner) - _riccati_ratio(n, x0, True)


def dielectric_sphere_resonance(radius: float, eps_r: float, kind: str, n: int = 1
                                ) -> complex:
    """The complex frequency (Hz) of the lowest TE or TM mode of order n (those of STARTS)
    of a sphere of ``radius`` (m); ValueError when the root finder does not converge."""
    guess = STARTS[kind, n] / math.sqrt(eps_r)
    found = root(lambda v: [mismatch(v[0] + 1j * v[1], eps_r, kind, n).real,
                            mismatch(v[0] + 1j * v[1], eps_r, kind, n).imag],
                 [guess, 0.01 * guess], tol=1e-13)
    x0 = complex(found.x[0], found.x[1])
    if not (abs(mismatch(x0, eps_r, kind, n)) < 1e-9 and x0.imag > 0):
        raise ValueError(f"no {kind}{n} root found for eps_r = {eps_r}")
    return C0 * x0 / (2 * math.pi * radius)
