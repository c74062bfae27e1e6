"""Where to look for the modes of an open problem when the case gives no target.

A solve with absorbing regions has, besides the part's modes, a dense spectrum of the
layer's own, so the lowest modes are no useful request: the solve looks near a frequency.
Without [solve] near it takes half a wavelength inside the part's densest region (the
largest eps_r mu_r outside the layers) across that region's largest extent,
f = c / (n D): the magnetic-dipole mode of a dielectric sphere has k a ≈ π inside, i.e.
exactly that (Stratton, Electromagnetic Theory, 1941, §9.22; common practice for a first
guess of a dielectric resonator's lowest mode). With air only, D is the extent of the space
inside the layers. The extent is twice the farthest node from a spherical layer's centre
when there is one (a model cut by symmetry planes through that centre keeps its extent).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import c as C0

from .absorber import absorbing_regions, find_layers


def default_target(model) -> tuple[float, str]:
    """(frequency in Hz, why) for an open problem without a target."""
    tm = model.mesh

    def nodes_of(regions):
        rows = np.isin(tm.tet_region, [tm.region_names[r] for r in regions])
        return tm.points[np.unique(tm.tets[rows])]

    return target_from_nodes(model, nodes_of, find_layers(model))


def target_from_nodes(model, nodes_of, layers) -> tuple[float, str]:
    """default_target for any discretisation: ``nodes_of(region names)`` gives the nodes of
    those regions as 3D points (n, 3), ``layers`` the model's fem.absorber Layers."""
    absorbing = absorbing_regions(model)
    candidates = [(m.eps_at(*np.zeros((3, 1)))[0] * m.mu_scalar, name)
                  for name, m in model.materials.items() if name not in absorbing]
    index_squared, name = max(candidates)
    regions = [name] if index_squared > 1 else [n for _, n in candidates]
    nodes = nodes_of(regions)
    extent = float(np.max(np.ptp(nodes, axis=0)))
    spheres = [layer for layer in layers if layer.shape == "spherical"]
    if spheres:   # about the layer's centre: right also when symmetry planes cut the part
        extent = 2 * float(np.max(np.linalg.norm(nodes - spheres[0].centre, axis=1)))
    n = math.sqrt(index_squared)
    what = (f"the region {name!r} (eps_r mu_r {index_squared:.4g})" if index_squared > 1
            else "the space inside the absorbing regions")
    return C0 / (n * extent), (f"half a wavelength in {what} across its {1e3 * extent:.4g} mm "
                               "extent")


def open_problem_target(model, near_hz: float | None, progress, *, layers=None,
                        default=default_target) -> float:
    """Print each absorbing layer as found in the mesh (or ``layers``); ``near_hz``, or the
    ``default`` target (printed) when it is None."""
    chosen = near_hz
    if chosen is None:
        chosen, why = default(model)
        progress.step(f"open problem without [solve] near: looking near "
                      f"{chosen / 1e9:.6g} GHz ({why})")
    absorbing = absorbing_regions(model)
    for layer in find_layers(model) if layers is None else layers:
        progress.step(layer.describe(absorbing[layer.region], chosen))
    return chosen
