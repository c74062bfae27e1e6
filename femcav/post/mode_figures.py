"""Every mode of a 3D result with its magnetic filling factors and its probe values."""

from __future__ import annotations

import math
from dataclasses import replace

from .filling import magnetic_filling
from .point_fields import NO_MIRROR, Mirror, fields_at_points
from .probes import ProbeSpec, probe_values


def with_field_figures(result, probes: tuple[ProbeSpec, ...], axis,
                       mirror: Mirror = NO_MIRROR):
    """``result`` (solver.SolveResult) with each mode's ``magnetic_filling`` and
    ``probes``; ``mirror``: the symmetry planes that cut the meshed part."""
    space = result.space
    cuts = len(mirror.planes)
    modes = []
    for mode in result.modes:
        omega = 2 * math.pi * mode.frequency_hz
        q_total = mode.losses.q_total if mode.losses else None
        values = tuple(
            probe_values(spec, fields_at_points(space, mode.dofs, omega, spec.points,
                                                mirror=mirror, label=mode.symmetry,
                                                cuts=cuts),
                         mode.frequency_hz, q_total)
            for spec in probes)
        modes.append(replace(mode, magnetic_filling=magnetic_filling(space, mode.dofs, axis),
                             probes=values))
    return replace(result, modes=modes)
