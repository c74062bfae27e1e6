"""An open body of revolution (absorbing regions on its section, axisymmetric.absorber): the
target when the case gives none, each mode's share of energy in the layer, and the layer's
own modes taken out of the table, by the rules of post.radiation applied per azimuthal order.

The target without [solve] near is fem.open_target's (half a wavelength in the densest
region across its extent), with the section's nodes turned into 3D points on both sides of
the axis, (±r, 0, z), so that the extent across the axis is the diameter.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from ..fem.absorber import absorbing_regions, with_stronger_layers
from ..fem.open_target import open_problem_target, target_from_nodes
from ..post.radiation import (STRENGTH_CHANGE, moved_modes, split_layer_modes,
                              warn_layer_modes)
from .absorber import find_section_layers


def section_open_target(model, near_hz: float | None, progress) -> float:
    """Print the section's layers; ``near_hz`` or the default target (printed)."""
    layers = find_section_layers(model)
    section = model.section

    def nodes_of(regions):
        rows = np.isin(section.tri_region, [section.region_names[r] for r in regions])
        rz = section.points[np.unique(section.triangles[rows])]
        zero = np.zeros(len(rz))
        return np.vstack([np.column_stack([rz[:, 0], zero, rz[:, 1]]),
                          np.column_stack([-rz[:, 0], zero, rz[:, 1]])])

    return open_problem_target(model, near_hz, progress, layers=layers,
                               default=lambda m: target_from_nodes(m, nodes_of, layers))


def section_absorber_share(space, vector: np.ndarray) -> float:
    """The share of the mode's stored energy (of the form's field: ∫ Re(mass coefficient)
    |F|² r dr dz with the layer's real medium) inside the absorbing regions; ``vector``
    (complex) over the space's kept DOFs."""
    _, weights = space.samples()
    fields = space.sampled_fields(vector[:, None])[..., 0]           # (3, P)
    density = np.real(weights) * np.sum(np.abs(fields) ** 2, axis=0)
    section = space.model.section
    inside = np.isin(section.tri_region, [section.region_names[name]
                                          for name in absorbing_regions(space.model)])
    per_triangle = density.reshape(inside.size, -1).sum(axis=1)
    total = float(per_triangle.sum())
    return float(per_triangle[inside].sum()) / total if total > 0 else 0.0


def without_section_layer_modes(result, model, resolve, *, losses_inside: bool,
                                layer_check: bool, progress):
    """``result`` with the layer's modes moved to ``layer_modes`` (post.radiation's rules);
    with ``layer_check``, ``resolve(model)`` solves the model again (its layers stronger)
    and a mode without a partner of its own order m there moved with the layer."""
    moved = set()
    if layer_check:
        stronger = resolve(with_stronger_layers(model, STRENGTH_CHANGE))
        others = [*stronger.modes, *stronger.layer_modes]
        for m in {mode.m for mode in result.modes}:
            own = [i for i, mode in enumerate(result.modes) if mode.m == m]
            found = moved_modes([result.modes[i] for i in own],
                                [mode for mode in others if mode.m == m])
            moved |= {own[i] for i in found}
        progress.step(f"layer check: {len(moved)} of {len(result.modes)} modes move when the "
                      f"layers are {STRENGTH_CHANGE:g} times stronger")
    kept, layer = split_layer_modes(None, result.modes, losses_inside=losses_inside,
                                    moved=moved)
    warn_layer_modes(progress, len(layer), len(result.modes), bool(moved))
    return replace(result, modes=kept, layer_modes=layer)

