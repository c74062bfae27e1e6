"""The phase advance of a mode of a chain of N coupled cells, from its field along the axis.

In the coupled-oscillator picture of a chain of identical cells (common practice; e.g.
H. Padamsee, J. Knobloch and T. Hays, RF Superconductivity for Accelerators, Wiley 1998,
the chapter on multicell cavities; from memory) the modes of one passband are standing
waves whose cell amplitudes follow a cosine of the cell number i = 1 .. N:

- chains whose end irises act as electric walls (E_z even about them; closed by metal at
  the iris planes): A_i ∝ cos(φ (i - 1/2)), φ = mπ/N, m = 0 .. N-1;
- chains whose ends act as magnetic walls (E_z odd about them), and near enough chains
  ending in beam pipes: A_i ∝ sin(φ (i - 1/2)), φ = mπ/N, m = 1 .. N.

Each set is an orthogonal basis of R^N, but the two share patterns (sin((N - m)π/N (i - 1/2))
is ± cos(mπ/N (i - 1/2)) cell by cell), so the cell amplitudes alone do not tell φ: the
chain's ends choose the set. A mode's amplitudes (the mean of E_z over each cell's length
on the axis) are matched against the N patterns of its set; the best one names the phase
advance φ when it carries at least CAPTURE of their sum of squares, else the mode is left
unlabelled. φ = π is the "π mode": E_z changes sign from each cell to the next.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

CAPTURE = 0.9     # as for the other field labels (post/classify.py)


@dataclass(frozen=True)
class PhaseAdvance:
    phase_rad: float          # φ, 0 .. π
    share: float              # of the cell amplitudes' sum of squares in the pattern
    label: str                # "π mode", "2π/3 mode", "0 mode"


def cell_amplitudes(z: np.ndarray, ez: np.ndarray, spans) -> np.ndarray:
    """The mean of ``ez`` (samples at increasing ``z``) over each (z0, z1) of ``spans``."""
    out = []
    for z0, z1 in spans:
        inside = (z >= z0) & (z <= z1)
        out.append(np.trapezoid(ez[inside], z[inside]) / (z1 - z0))
    return np.asarray(out)


def patterns(n: int, electric_ends: bool) -> list[tuple[Fraction, np.ndarray]]:
    """(φ/π, unit vector of cell amplitudes) of the patterns of an n-cell chain whose ends
    are electric walls at its end irises (``electric_ends``) or not (magnetic walls there,
    or beam pipes)."""
    i = np.arange(1, n + 1) - 0.5
    if electric_ends:
        out = [(Fraction(m, n), np.cos(m * math.pi / n * i)) for m in range(n)]
    else:
        out = [(Fraction(m, n), np.sin(m * math.pi / n * i)) for m in range(1, n + 1)]
    return [(phase, v / np.linalg.norm(v)) for phase, v in out]


def phase_label(phase: Fraction) -> str:
    if phase == 0:
        return "0 mode"
    top = "" if phase.numerator == 1 else str(phase.numerator)
    return f"{top}π mode" if phase.denominator == 1 else f"{top}π/{phase.denominator} mode"


def phase_advance(amplitudes: np.ndarray, electric_ends: bool) -> PhaseAdvance | None:
    """The phase advance whose pattern (of the set the ends choose) best fits
    ``amplitudes`` (one per cell), or None when none carries CAPTURE of them."""
    a = np.asarray(amplitudes, float)
    total = float(a @ a)
    if total == 0 or not np.all(np.isfinite(a)):
        return None
    phase, share = max(((p, float(v @ a) ** 2 / total) for p, v in patterns(len(a), electric_ends)),
                       key=lambda item: item[1])
    if share < CAPTURE:
        return None
    return PhaseAdvance(float(phase) * math.pi, share, phase_label(phase))
