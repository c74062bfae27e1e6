"""How well the error bars hold: solve a case with error bars and set every barred quantity
(frequency, each Q) beside a reference value known from elsewhere, then count.

Coverage is the share of true errors inside their bars (the bars are worth their name at
95 % or more); tightness is the median of bar / |true error| (a bar many times the error
hides what the solve really achieved). ``extrapolation_gain`` is the median of
|extrapolated - reference| / |raw - reference|: below 1 the extrapolated value is the better
one. benchmarks/error_bar_calibration.py runs the calibration set; the test suite runs a
few cheap cases of it.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, replace
from pathlib import Path
from statistics import median
from typing import Callable, Sequence

FREQUENCY = "frequency"


@dataclass(frozen=True)
class Reference:
    """The known value of one mode: its frequency (Hz) and any Q factors by LossReport field
    (``q_wall``, ``q_dielectric``, ...); ``m`` the azimuthal order on a body of revolution."""

    frequency_hz: float
    q: dict[str, float]
    m: int | None = None


@dataclass(frozen=True)
class BarSample:
    case: str
    mode: int
    quantity: str            # FREQUENCY or a LossReport field
    computed: float
    reference: float
    bar: float | None
    extrapolated: float | None

    @property
    def error(self) -> float:
        return abs(self.computed - self.reference)

    @property
    def inside(self) -> bool:
        return self.bar is not None and self.error <= self.bar


def solve_text(text: str, folder: Path, **settings):
    """Solve a case file's text with error bars (``settings`` override its [solve] table)."""
    from .case import case_from_data
    from .runner import solve_case

    case = case_from_data(tomllib.loads(text), Path(folder) / "calibration.toml")
    return solve_case(case, replace(case.solve, error_estimate=True, **settings))


def pair_modes(modes: Sequence, references: Sequence[Reference]) -> list[tuple]:
    """(mode, reference) in frequency order, per azimuthal order where the references have
    one; a reference beyond the computed modes is left out."""
    pairs = []
    for m in sorted({r.m for r in references}, key=lambda v: -1 if v is None else v):
        mine = sorted((x for x in modes if m is None or x.m == m), key=lambda x: x.frequency_hz)
        wanted = sorted((r for r in references if r.m == m), key=lambda r: r.frequency_hz)
        pairs += list(zip(mine, wanted))
    return pairs


def samples(case: str, result, references: Sequence[Reference]) -> list[BarSample]:
    """Every barred quantity of the modes paired with ``references``."""
    out = []
    for mode, ref in pair_modes(result.modes, references):
        out.append(BarSample(case, mode.index, FREQUENCY, mode.frequency_hz, ref.frequency_hz,
                             mode.error_estimate_hz, mode.extrapolated_hz))
        estimates = mode.q_estimates or {}
        for quantity, value in ref.q.items():
            q = estimates.get(quantity)
            loss = getattr(mode.losses, quantity, None) if mode.losses else None
            if loss is None:
                continue
            out.append(BarSample(case, mode.index, quantity, float(loss), value,
                                 None if q is None else q.error,
                                 None if q is None else q.extrapolated))
    return out


def coverage(chosen: Sequence[BarSample]) -> float:
    return sum(s.inside for s in chosen) / len(chosen) if chosen else math.nan


def tightness(chosen: Sequence[BarSample]) -> float:
    """Median bar / |true error| over the samples with a bar and a nonzero error."""
    ratios = [s.bar / s.error for s in chosen if s.bar is not None and s.error > 0]
    return median(ratios) if ratios else math.nan


def extrapolation_gain(chosen: Sequence[BarSample]) -> float:
    ratios = [abs(s.extrapolated - s.reference) / s.error for s in chosen
              if s.extrapolated is not None and s.error > 0]
    return median(ratios) if ratios else math.nan


def by_quantity(all_samples: Sequence[BarSample],
                key: Callable[[BarSample], str] = lambda s: s.quantity) -> dict[str, list]:
    groups: dict[str, list] = {}
    for s in all_samples:
        groups.setdefault(key(s), []).append(s)
    return groups


def summary_lines(all_samples: Sequence[BarSample],
                  key: Callable[[BarSample], str] = lambda s: s.quantity) -> list[str]:
    """One line per group (by quantity, or ``key``) and one for all: count, coverage,
    tightness, extrapolation gain."""
    lines = [f"{'group':<22}{'samples':>8}{'coverage':>10}{'median bar/error':>18}"
             f"{'extrap./raw error':>19}"]
    groups = by_quantity(all_samples, key)
    for name, chosen in [*sorted(groups.items()), ("all", list(all_samples))]:
        lines.append(f"{name:<22}{len(chosen):>8}{coverage(chosen) * 100:>9.1f}%"
                     f"{tightness(chosen):>18.2f}{extrapolation_gain(chosen):>19.2f}")
    return lines
