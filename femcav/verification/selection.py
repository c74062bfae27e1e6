"""Which solved modes a reference speaks about: by azimuthal order and field class (bodies of
revolution), by polarisation (3D boxes whose reference covers one family only), or simply the
lowest ones."""

from __future__ import annotations

import math

import numpy as np


def lowest(result, count: int) -> list[float]:
    return sorted(m.frequency_hz for m in result.modes)[:count]


def of_order(result, m: int, field_class: str | None = None) -> list[float]:
    """Frequencies of the modes of azimuthal order m (and of one field class), ascending."""
    return sorted(mode.frequency_hz for mode in result.modes
                  if mode.m == m and (field_class is None or mode.field_class == field_class))


def mode_of_order(result, m: int, field_class: str, near_hz: float):
    """The mode of order m and class nearest ``near_hz`` (None if the class is absent)."""
    found = [mode for mode in result.modes if mode.m == m and mode.field_class == field_class]
    return min(found, key=lambda mode: abs(mode.frequency_hz - near_hz), default=None)


def polarised(result, axis: int, share: float = 0.99) -> list[float]:
    """Frequencies of the 3D modes whose electric energy is at least ``share`` in the
    component along ``axis`` (0, 1, 2 for x, y, z), ascending."""
    from ..post.fields import mode_fields

    volumes = np.abs(result.space.model.mesh.tet_volumes())
    out = []
    for mode in result.modes:
        E = mode_fields(result.space, mode.dofs, 2 * math.pi * mode.frequency_hz).E
        along = np.sum(volumes * np.abs(E[:, axis]) ** 2)
        if along >= share * np.sum(volumes * np.sum(np.abs(E) ** 2, axis=1)):
            out.append(mode.frequency_hz)
    return sorted(out)
