"""The plain data of a verification case: what is solved (a case file per element size),
what it is compared with, and what counts as passing."""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Callable


@dataclass(frozen=True)
class Quantity:
    """One compared quantity. Its error on a mesh is the largest relative deviation of the
    computed values from the reference ones; it passes when the finest mesh's error is
    within ``tolerance`` and, where ``expected_rate`` is given and the errors stand above
    the algebra's floor, the observed rate reaches the share of it that run.RATE_SHARE says."""

    name: str
    tolerance: float
    expected_rate: float | None     # error ∝ h^rate; None: exact on any mesh, no rate


@dataclass(frozen=True)
class Comparison:
    """Computed against reference values of one quantity on one mesh (Hz, or 1 for a Q)."""

    computed: tuple[float, ...]
    reference: tuple[float, ...]
    unit: str = "Hz"
    bars: tuple[float, ...] | None = None    # the computed values' error bars (Hz)

    @property
    def error(self) -> float:
        """Largest |computed / reference - 1|; infinite when values are missing."""
        if len(self.computed) < len(self.reference) or not self.reference:
            return math.inf
        if any(c is None for c in self.computed):     # e.g. a mode left without a Q
            return math.inf
        return max(abs(c / r - 1) for c, r in zip(self.computed, self.reference))

    @property
    def coverage(self) -> float | None:
        """Share of the computed values whose error bar holds the reference value."""
        if self.bars is None or len(self.bars) < len(self.reference):
            return None
        inside = [b is not None and abs(c - r) <= b       # a mode without a bar: not held
                  for c, r, b in zip(self.computed, self.reference, self.bars)]
        return sum(inside) / len(inside)


@dataclass(frozen=True)
class ReferenceCase:
    name: str
    title: str
    covers: str                          # what of femcav the case exercises
    source: str                          # where the reference values come from
    order: int                           # element order
    section: bool                        # solved on the (r, z) section: h ∝ DOFs^(-1/2)
    sizes: dict[str, tuple[float, ...]]  # "quick" / "full" -> element sizes (m), coarse first
    case_text: Callable[[float], str]    # the case file for one element size
    compare: Callable[[object], dict[str, Comparison]]   # solve result -> quantity -> values
    quantities: tuple[Quantity, ...]
    # extra input files for one element size (an imported mesh), written beside the case
    files: Callable[[Path, float], None] | None = None
    error_bars: bool = False             # the finest mesh is solved with error bars
