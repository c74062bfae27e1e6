"""Element sizes for a builder's mesh, from the case's [mesh] table and region sizes.

The size in a region is the smallest of: the global size (``[mesh] size``, default a tenth
of the part's extent), the region's own ``mesh_size``, and, when ``max_frequency`` is given,
the wavelength in the region's material at that frequency divided by ``per_wavelength``.

Default ``per_wavelength`` = 15: with lowest-order elements the frequency error is about
(kh)²/40 (our box measurements: 2.3e-3 at 13.5 elements per wavelength of the highest mode,
8e-3 at 8.8), so 15 per wavelength of the highest frequency of interest gives about 2e-3
there and less for the lower modes.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import c as C0

from .geometry.parts import DEFAULT_SIZE_FRACTION, Layout, Sizing
from .materials import VACUUM, Material
from .schema import EPS_R

DEFAULT_PER_WAVELENGTH = 15.0


def max_refractive_index(material: Material, layout: Layout) -> float:
    """sqrt(eps_r mu_r) at its largest; an expression is sampled on a grid over the part."""
    if material.is_uniform:
        eps = float(material.eps_r)
    else:
        lo, hi = layout.bounds()
        axes = [np.linspace(lo[i], hi[i], 9) for i in range(3)]
        x, y, z = np.meshgrid(*axes, indexing="ij")
        values = material.eps_at(x, y, z)
        values = values[np.isfinite(values)]
        # values outside the eps_r range are refused at the mesh nodes (Material.check);
        # here they must only not turn the sizes into NaN or a runaway
        eps = float(np.clip(values, EPS_R.low, EPS_R.high).max()) if values.size else 1.0
    return math.sqrt(max(eps, 1.0) * material.mu_scalar)


def builder_sizing(case, layout: Layout, *, section: bool = False) -> Sizing:
    """The sizes for ``layout``'s 3D mesh, or with ``section`` its meridional section; the
    element budget keeps memory for the case's solve of that mesh (the 3D mesh of an
    axisymmetric case is only meshed, never solved)."""
    spec = case.mesh
    size = spec.size
    region_sizes = dict(spec.region_sizes)
    if spec.max_frequency_hz is not None:
        per = spec.per_wavelength or DEFAULT_PER_WAVELENGTH
        wavelength = C0 / spec.max_frequency_hz
        if size is None:
            size = wavelength / per
        regions = {layout.background, *(name for name, _ in layout.fills)}
        for region in regions:
            n = max_refractive_index(case.regions.get(region, VACUUM), layout)
            region_sizes[region] = min(region_sizes.get(region, math.inf), wavelength / n / per)
    if size is None:
        size = DEFAULT_SIZE_FRACTION * layout.extent()
    return Sizing(size=size, region_sizes=region_sizes, edge_factor=spec.edge_refinement,
                  curved=spec.curved, fill_edge_factor=spec.fill_edge_refinement,
                  periodic_faces=tuple((p.wall_a, p.wall_b) for p in getattr(case, "periodic", ())),
                  solve_order=(case.solve.order if section == (case.solve.azimuthal_orders
                                                               is not None) else None))
