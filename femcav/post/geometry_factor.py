"""The geometry factor G of a mode: its wall Q times the surface resistance, a property of
the shape and the mode alone.

With W = (μ0/2) ∫ μ_r |H|² dV and P = (R_s/2) ∮ |H_t|² dS over the metal walls,
Q_wall R_s = ω μ0 ∫ μ_r |H|² dV / ∮ |H_t|² dS = G (H. Padamsee et al., RF
Superconductivity for Accelerators, ch. 1; common practice). Where the walls have different
R_s, G is still the metal-free ratio: from each wall's share s_w of the loss,
∮_w |H_t|² dS = 2 s_w P / R_s,w, so 1/G = Σ_w s_w / (Q_wall R_s,w), which the loss report
already holds.
"""

from __future__ import annotations

import math

from ..wall_resistance import wall_surface_resistance
from .losses import LossReport


def geometry_factor(losses: LossReport | None, walls: dict, frequency_hz: float
                    ) -> float | None:
    """G in ohms; None for a mode without wall loss."""
    if losses is None or not losses.q_wall or not losses.wall_loss_share:
        return None
    omega = 2 * math.pi * frequency_hz
    inverse = sum(share / (losses.q_wall * wall_surface_resistance(walls[name], omega))
                  for name, share in losses.wall_loss_share.items())
    return 1.0 / inverse if inverse > 0 else None
