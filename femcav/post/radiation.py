"""What the modes of an open problem (absorbing regions, fem.absorber) say about radiation:
each mode's radiation Q and its share of stored energy inside the absorbing regions, and
which modes are the layer's own rather than the part's.

Radiation Q. The layer makes the pencil complex symmetric, and every mode's complex
frequency f carries all the loss inside the solve: Q = Re f / (2 |Im f|). When the layer is
the only loss inside the solve (the default: loss tangents and walls are perturbation
estimates), that Q is the radiation Q. With losses inside the solve as well, the dielectric
part is taken off with its perturbation estimate from the mode's own (complex) field:
1/Q_rad = 1/Q - 1/Q_d (infinite when that difference is not positive: the radiation is below
what the split resolves).

Q total. A mode that also has wall or dielectric Q (perturbation estimates, post.losses)
gets radiation in its total: 1/Q_total = 1/Q_wall + 1/Q_d + 1/Q_rad.

Layer modes. A discretised layer has modes of its own: fields that live in the layer (or in
the air it closes) and depend on its strength and thickness, not on the part. A mode whose
share of stored energy inside the absorbing regions exceeds LAYER_SHARE_LIMIT is one of them:
it is left out of the mode table, counted on stderr, and kept in modes.json under
``layer_modes``. With [solve] layer_check the model is solved a second time with every
layer STRENGTH_CHANGE times stronger, and a mode whose complex frequency moves by more than
MOVE_LIMIT of itself is one of the layer's too (a physical mode does not depend on the
layer). The share is that of the field the form solves for (electric energy
∫ Re(ε) |E|² in the E form, magnetic ∫ Re(μ) |H|² in the H form), with the layer's real
medium (not its stretched tensor) as the weight, so that a mode's energy is counted as the
field holds it. A physical mode of a part clear of its layer keeps most of its energy in and
near the part (the dielectric sphere's TE mode: below 1 %, tests/test_open_resonators.py);
the layer's own modes hold most of theirs inside it.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from ..fem.absorber import absorbing_regions, medium_coefficients
from ..fem.coefficients import quadratic
from ..fem.quadrature_fields import fields_at_quadrature

LAYER_SHARE_LIMIT = 0.5
# [solve] layer_check: the second solve's layers are this much stronger, and a mode whose
# complex frequency has no partner within MOVE_LIMIT |f| there moved with the layer. Measured
# on the eps_r 36 sphere (strength 6 -> 9): its mode moved 5e-5, the layer's modes 30 to 60 %.
STRENGTH_CHANGE = 1.5
MOVE_LIMIT = 1e-2


def absorber_energy_share(space, dofs: np.ndarray) -> float:
    """The share of the mode's stored energy (of the form's field) inside the absorbing
    regions; ``dofs`` over every DOF of the mesh."""
    fields = fields_at_quadrature(space, dofs)
    _, weight = medium_coefficients(space)
    tm = space.model.mesh
    inside = np.isin(tm.tet_region, [tm.region_names[name]
                                     for name in absorbing_regions(space.model)])
    per_element = np.sum(quadratic(weight, fields.value) * fields.dx, axis=1)
    total = float(per_element.sum())
    return float(per_element[inside].sum()) / total if total > 0 else 0.0


def radiation_q(mode, losses_inside: bool) -> float | None:
    """The radiation Q of ``mode`` (see the module's note); None without a complex Q."""
    q = mode.q_eigenvalue
    if q is None:
        return None
    q_d = mode.losses.q_dielectric if losses_inside and mode.losses is not None else None
    if not q_d:
        return q
    rest = 1.0 / q - 1.0 / q_d
    return 1.0 / rest if rest > 0 else math.inf


def _with_radiation(losses, q_rad: float | None):
    """The loss report with radiation in its total: 1/Q = 1/Q_wall + 1/Q_d + 1/Q_rad."""
    if losses is None or losses.q_total is None or not q_rad:
        return losses
    return replace(losses, q_total=1.0 / (1.0 / losses.q_total + 1.0 / q_rad))


def moved_modes(modes: list, others: list) -> set[int]:
    """Positions of the ``modes`` whose complex frequency has no partner within
    MOVE_LIMIT |f| among those of ``others`` (the solve with stronger layers)."""
    found = np.array([m.complex_frequency_hz for m in others], dtype=complex)
    return {i for i, m in enumerate(modes)
            if not found.size or np.min(np.abs(found - m.complex_frequency_hz))
            > MOVE_LIMIT * abs(m.complex_frequency_hz)}


def split_layer_modes(space, modes: list, *, losses_inside: bool,
                      moved: set[int] = frozenset()) -> tuple[list, list]:
    """(the part's modes, the layer's modes: those above LAYER_SHARE_LIMIT and the
    positions ``moved``), each given ``absorber_energy_share`` (unless it has one, found by
    its discretisation: a section's) and ``q_radiation``; the part's modes renumbered from
    1."""
    kept, layer = [], []
    for position, mode in enumerate(modes):
        share = (mode.absorber_energy_share if mode.absorber_energy_share is not None
                 else absorber_energy_share(space, space.full_vectors(mode.dofs)))
        q_rad = radiation_q(mode, losses_inside)
        mode = replace(mode, absorber_energy_share=share, q_radiation=q_rad,
                       losses=_with_radiation(mode.losses, q_rad))
        (layer if share > LAYER_SHARE_LIMIT or position in moved else kept).append(mode)
    return ([replace(m, index=i + 1) for i, m in enumerate(kept)], layer)


def warn_layer_modes(progress, n_layer: int, n_all: int, moved: bool) -> None:
    """Say on stderr how many modes went to ``layer_modes`` (nothing when none did)."""
    if n_layer:
        progress.warn(f"{n_layer} of {n_all} modes live in the absorbing layer (more than "
                      f"{LAYER_SHARE_LIMIT:.0%} of their energy there"
                      + (f", or moving by more than {MOVE_LIMIT:.0%} with its strength"
                         if moved else "") + "): left out of the table, kept in modes.json "
                      "under layer_modes")
