"""The surface resistance of a superconducting wall: a low-temperature BCS approximation.

Well below the critical temperature T_c, the BCS surface resistance of a superconductor is
close to

    R_BCS(f, T) = (A / T) (f / f_ref)² exp(−Δ / (k_B T)),

the form quoted for niobium in H. Padamsee, J. Knobloch and T. Hays, RF Superconductivity
for Accelerators, Wiley 1998, ch. 5 (from memory): R_BCS = 2e-4 Ω (1 K / T) (f / 1.5 GHz)²
exp(−17.67 K / T), with T_c = 9.25 K and Δ / (k_B T_c) ≈ 1.91. It gives about 11 nΩ at
1.3 GHz and 2 K, within the 10-20 nΩ commonly quoted there. The f² law and the exponential
hold for T below about T_c / 2 and hf ≪ Δ; the coefficient depends on the material's mean
free path (the preparation of the surface), so the figure is a typical one, not a
measurement. The measured surface resistance adds a residual part R_res that no theory
gives (trapped flux, hydrides, oxides): the case file states it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass(frozen=True)
class Superconductor:
    """The constants of the low-temperature approximation for one material."""

    critical_temperature_k: float
    gap_over_boltzmann_k: float        # Δ / k_B
    coefficient_ohm_k: float           # A, at the reference frequency
    reference_frequency_hz: float

    @property
    def highest_temperature_k(self) -> float:
        """Where the approximation stops holding: half the critical temperature."""
        return self.critical_temperature_k / 2


# Padamsee, Knobloch and Hays, RF Superconductivity for Accelerators, ch. 5 (from memory).
NIOBIUM = Superconductor(critical_temperature_k=9.25, gap_over_boltzmann_k=17.67,
                         coefficient_ohm_k=2e-4, reference_frequency_hz=1.5e9)
SUPERCONDUCTORS = {"niobium": NIOBIUM}


def bcs_resistance(material: Superconductor, frequency_hz: float, temperature_k: float
                   ) -> float:
    """R_BCS in ohms at ``frequency_hz`` and ``temperature_k`` (see the module notes)."""
    return (material.coefficient_ohm_k / temperature_k
            * (frequency_hz / material.reference_frequency_hz) ** 2
            * math.exp(-material.gap_over_boltzmann_k / temperature_k))
