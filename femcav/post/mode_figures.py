"""Every mode of a result with its magnetic filling factors and its probe values."""

from __future__ import annotations

from dataclasses import replace
from typing import Callable

import numpy as np

from .probes import ProbeSpec, probe_values


def with_field_figures(result, probes: tuple[ProbeSpec, ...],
                       fields_of: Callable[[object, np.ndarray], object],
                       filling_of: Callable[[object], object]):
    """``result`` with each mode's ``magnetic_filling`` and ``probes``. ``fields_of(mode,
    points)``: the mode's fields at points (n, 3), an object with E, H and mu_r (as
    post.point_fields.PointFields); ``filling_of(mode)``: its post.filling.MagneticFilling.
    The 3D and axisymmetric solvers each supply their own."""
    modes = []
    for mode in result.modes:
        q_total = mode.losses.q_total if mode.losses else None
        values = tuple(probe_values(spec, fields_of(mode, spec.points), mode.frequency_hz,
                                    q_total)
                       for spec in probes)
        modes.append(replace(mode, magnetic_filling=filling_of(mode), probes=values))
    return replace(result, modes=modes)
