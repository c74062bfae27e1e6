"""Resonances of a pillbox (PEC, radius a, length d) filled with a uniaxial crystal whose
axis is the cylinder's: ε = diag(ε⊥, ε⊥, ε∥).

Fields TE to z (E_z = 0) see ε⊥ only: k0² ε⊥ = (p'_mn / a)² + (lπ / d)², l >= 1. Fields TM
to z (H_z = 0): for a plane wave with H along y and k = (k_t, 0, k_z), ∇×H = jωε0 ε E gives
E_x = k_z H / (ωε0 ε⊥), E_z = -k_t H / (ωε0 ε∥), and ∇×E = -jωμ0 H then
k_t² / ε∥ + k_z² / ε⊥ = k0² (the extraordinary wave of a uniaxial medium; W. C. Chew, Waves
and Fields in Inhomogeneous Media, 1990, ch. 1, from memory), with k_t = p_mn / a and
k_z = lπ / d, l >= 0. p_mn and p'_mn are the zeros of J_m and J_m' (scipy.special); with
ε⊥ = ε∥ these are the isotropic pillbox's modes (femcav.analytic.cylinder; Pozar,
Microwave Engineering, 4th ed., §6.4).
"""

from __future__ import annotations

import math

from scipy.constants import c as C0
from scipy.special import jn_zeros, jnp_zeros


def uniaxial_pillbox_modes(radius: float, length: float, m: int, count: int,
                           eps_perpendicular: float, eps_parallel: float
                           ) -> list[tuple[float, str]]:
    """(frequency in Hz, name such as "TM010") of the lowest ``count`` modes of azimuthal
    order m, each cos/sin pair listed once."""
    found = []
    for n, (p, p_prime) in enumerate(zip(jn_zeros(m, count), jnp_zeros(m, count)), start=1):
        for l in range(count + 1):
            kz = l * math.pi / length
            tm = (p / radius) ** 2 / eps_parallel + kz**2 / eps_perpendicular
            found.append((C0 * math.sqrt(tm) / (2 * math.pi), f"TM{m}{n}{l}"))
            if l:
                te = ((p_prime / radius) ** 2 + kz**2) / eps_perpendicular
                found.append((C0 * math.sqrt(te) / (2 * math.pi), f"TE{m}{n}{l}"))
    return sorted(found)[:count]
