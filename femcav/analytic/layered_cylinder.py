"""TE_0np resonances of a pillbox (radius a, length d) whose bottom 0 <= z <= t is filled with a
dielectric disc of relative permittivity eps_r over the whole cross-section.

With E = E_φ(r, z) = J1(k_c r) g(z) φ̂, k_c = p'_0n / a (the n-th zero of J0' = -J1), each
layer has g'' + (eps_i k0² - k_c²) g = 0, g(0) = g(d) = 0, and g and g' are continuous at
z = t (tangential E and H_r ∝ ∂E_φ/∂z with μ_r = 1). That is the transverse resonance of
femcav.analytic.slab with the roles of the axes exchanged: the slab's "a" is d, its "t" is
t, and its β along the guide is k_c (Pozar, Microwave Engineering, 4th ed., §3.3 and §6.4;
from memory). So the roots come from slab_te_m0p_frequencies with p = 1 and a guide length
π / k_c.
"""

from __future__ import annotations

import math

from scipy.special import jnp_zeros

from .slab import slab_te_m0p_frequencies


def layered_pillbox_te0np_frequencies(radius: float, length: float, layer: float,
                                      eps_r: float, families: int, count: int) -> list[float]:
    """The lowest ``count`` TE_0np frequencies (Hz) over the radial families n = 1..families."""
    out = []
    for kc_a in jnp_zeros(0, families):
        kc = kc_a / radius
        out += slab_te_m0p_frequencies(length, layer, math.pi / kc, eps_r, 1, count)
    return sorted(out)[:count]
