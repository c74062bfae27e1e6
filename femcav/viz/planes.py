"""Where a mode picture cuts the part.

The three overview planes go through the energy centre of the region that holds most of the
mode's stored energy (a dielectric puck, the gap of a re-entrant cavity, the whole of an
empty box), so that they cut through the field instead of hiding it behind a plane through
the enclosure's middle. The face-on plane of the arrows goes through the strongest cell of
the field the arrows show, normal to the principal axis along which that field carries the
least energy, so that it lies mostly in the plane.
"""

from __future__ import annotations

import numpy as np


def energy_centre(centres: np.ndarray, energy: np.ndarray, region: np.ndarray | None
                  ) -> np.ndarray:
    """The energy-weighted centre of the region holding most of ``energy`` (per cell, J)."""
    energy = np.abs(np.asarray(energy, dtype=float))
    if region is not None and region.size == energy.size:
        ids = np.unique(region)
        held = [energy[region == rid].sum() for rid in ids]
        keep = region == ids[int(np.argmax(held))]
    else:
        keep = np.ones(energy.size, dtype=bool)
    weights = energy[keep]
    if not weights.sum() > 0:
        return centres[keep].mean(axis=0)
    return (centres[keep] * weights[:, None]).sum(axis=0) / weights.sum()


def arrow_plane(centres: np.ndarray, vectors: np.ndarray, volumes: np.ndarray
                ) -> tuple[int, np.ndarray]:
    """(normal axis 0/1/2, origin): the principal plane through the strongest cell of
    ``vectors`` across which they carry the least energy."""
    vectors = np.asarray(vectors, dtype=float)
    strongest = int(np.argmax(np.linalg.norm(vectors, axis=1)))
    share = (vectors**2 * np.abs(volumes)[:, None]).sum(axis=0)
    return int(np.argmin(share)), np.asarray(centres[strongest], dtype=float)
