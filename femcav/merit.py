"""Figures of merit of every mode, for either solver: the geometry factor (with metal walls)
and, when the case has a [beam] table, the beam figures (femcav.post.beam).

The 3D and the axisymmetric solvers sample their fields in their own way
(femcav.post.beam_fields, femcav.axisymmetric.beam_fields); the figures are made from the
samples the same way. The fields are scaled to 1 J stored, so that is the W of R/Q.
"""

from __future__ import annotations

import math
from dataclasses import replace

from .errors import InputError
from .post.beam import BeamRequest, beam_figures, beam_line
from .post.geometry_factor import geometry_factor

STORED_ENERGY_J = 1.0     # the scale of the sampled fields


def with_figures_of_merit(result, beam: BeamRequest | None):
    """``result`` (a SolveResult or an AxisymmetricResult) with every mode's
    ``geometry_factor_ohm`` and, when ``beam`` is given, its ``beam`` figures."""
    axisymmetric = hasattr(result, "spaces")
    if beam is not None and result.classes:
        # a merged result keeps one class's space; the others' fields cannot be sampled
        raise InputError("beam figures need the whole part; solve it without symmetry cuts",
                         field="beam")
    if axisymmetric:
        from .axisymmetric import beam_fields as sampler
    else:
        from .post import beam_fields as sampler
    modes, line = [], None
    for mode in result.modes:
        space = result.spaces[mode.m] if axisymmetric else result.space
        figures = None
        if beam is not None:
            line = line or beam_line(beam, *sampler.default_axis_line(space))
            omega = 2 * math.pi * mode.frequency_hz
            integrals = sampler.line_field_integrals(space, mode.dofs, omega, line)
            # peaks only matter against a field on the line (none for m >= 1 on an axis)
            peaks = (sampler.surface_peaks(space, mode.dofs, omega)
                     if integrals.absolute > 0 else None)
            figures = beam_figures(line, integrals, peaks, omega, STORED_ENERGY_J,
                                   mode.losses.q_total if mode.losses else None)
        modes.append(replace(mode, beam=figures, geometry_factor_ohm=geometry_factor(
            mode.losses, space.model.walls, mode.frequency_hz)))
    return replace(result, modes=modes)
