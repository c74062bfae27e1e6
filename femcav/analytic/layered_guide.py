"""TE_m0 bands of a rectangular guide filled with a periodic stack of dielectric layers.

The guide is 0 <= x <= a with PEC walls, the layers fill its whole cross-section one after
another along z, the stack repeats with period L = Σ d_i. A field E = E_y(z) sin(mπx/a) ŷ
has in layer i the wavenumber k_i² = ε_i k0² - (mπ/a)² along z (D. M. Pozar, Microwave
Engineering, 4th ed., §3.3), and E_y and dE_y/dz (∝ H_x, μ_r = 1) are continuous, so each
layer multiplies (E_y, dE_y/dz) by [[C, S], [-k² S, C]] with S = sin(k d)/k, C = cos(k d)
(sinh and cosh when k² < 0: real and smooth through cutoff). A Bloch wave advancing φ per
period needs cos φ = ½ tr T of the product (P. Yeh, Optical Waves in Layered Media, ch. 6,
from memory); the band frequencies at φ are the roots in f, found by scanning and brentq.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import c as C0
from scipy.optimize import brentq

from .slab import _c, _s


def half_trace(f_hz: float, width: float, layers, m: int = 1) -> float:
    """½ tr T of one period at frequency ``f_hz``; ``layers`` = [(eps_r, thickness), ...]."""
    k0_squared = (2 * math.pi * f_hz / C0) ** 2
    cutoff = (m * math.pi / width) ** 2
    T = np.eye(2)
    for eps, thickness in layers:
        k2 = eps * k0_squared - cutoff
        S, C = _s(k2, thickness), _c(k2, thickness)
        T = np.array([[C, S], [-k2 * S, C]]) @ T
    return 0.5 * float(np.trace(T))


def layered_guide_band_frequencies(width: float, layers, phase_rad: float, count: int,
                                   m: int = 1, f_max: float | None = None) -> list[float]:
    """The lowest ``count`` frequencies (Hz) of the TE_m0 bands at the phase advance
    ``phase_rad`` per period (fewer if there are none below ``f_max``)."""
    eps_max = max(eps for eps, _ in layers)
    period = sum(d for _, d in layers)
    lowest = C0 / 2 * m / width / math.sqrt(eps_max)        # below the fullest layer's cutoff
    f_max = f_max or lowest * 20 + count * C0 / period
    grid = np.linspace(0.5 * lowest, f_max, 4000 * max(count, 1))
    target = math.cos(phase_rad)
    values = np.array([half_trace(f, width, layers, m) - target for f in grid])
    roots = []
    for i in np.flatnonzero(np.sign(values[:-1]) * np.sign(values[1:]) <= 0):
        if values[i] == 0 and i and values[i - 1] == 0:
            continue
        roots.append(brentq(lambda f: half_trace(f, width, layers, m) - target,
                            grid[i], grid[i + 1]))
        if len(roots) == count:
            break
    return roots
