"""Wall metals: conductivity presets, surface resistance and an optional roughness factor."""

from __future__ import annotations

import math

# Conductivities at room temperature, S/m: D. M. Pozar, Microwave Engineering, 4th ed.,
# Appendix F, "Conductivities for some materials" (values from memory of that table).
CONDUCTIVITY_S_PER_M = {
    "silver": 6.173e7,
    "copper": 5.813e7,
    "gold": 4.098e7,
    "aluminium": 3.816e7,
    "brass": 2.564e7,
}


def skin_depth(omega: float, conductivity: float, mu_r: float = 1.0) -> float:
    """δ = sqrt(2 / (ω μ σ)) (Pozar §1.7, common practice)."""
    from scipy.constants import mu_0   # on first use: reading a case file needs no scipy

    return math.sqrt(2.0 / (omega * mu_0 * mu_r * conductivity))


def surface_resistance(omega: float, conductivity: float, roughness_m: float | None = None
                       ) -> float:
    """R_s = sqrt(ω μ0 / (2σ)), times the roughness factor when an rms roughness is given.

    Roughness: K = 1 + (2/π) atan(1.4 (Δ/δ)²), Δ the rms surface roughness and δ the skin
    depth (E. O. Hammerstad and Ø. Jensen, "Accurate models for microstrip computer-aided
    design", IEEE MTT-S Int. Microwave Symp. Digest, 1980, pp. 407-409; from memory). It grows
    from 1 for a smooth wall to 2 for a very rough one.
    """
    from scipy.constants import mu_0

    rs = math.sqrt(omega * mu_0 / (2.0 * conductivity))
    if roughness_m:
        ratio = roughness_m / skin_depth(omega, conductivity)
        rs *= 1.0 + (2.0 / math.pi) * math.atan(1.4 * ratio**2)
    return rs
