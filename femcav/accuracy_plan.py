"""A priori sizing for a stated frequency accuracy: what a builder's part is meshed and solved
with when the case gives no element size.

The highest frequency of interest is ``near`` (with a margin for the modes around it) or
the frequency below which Weyl's law counts the requested modes: N(f) = V_opt k³ / (3π²),
V_opt = Σ V_i (ε_r μ_r)^(3/2) over the regions (H. Weyl, 1911; for cavities e.g. R. F.
Harrington, Time-Harmonic Electromagnetic Fields, §8; from memory), times WEYL_MARGIN,
because the lowest modes of a cavity lie above Weyl's count (the box and pillbox of
the calibration set: their sixth modes 16 % and 11 % above it).

The element order is 2 unless the case sets one (curved elements where the part has curved
walls or interfaces, which otherwise cap order 2 at an O(h²) geometric error), and the
element size in every region is the wavelength in that region's material at that frequency
divided by ``per_wavelength``. For order k the frequency error behaves like
C_k (2π / n)^(2k) at n elements per wavelength (the h^(2k) rate of Nédélec elements,
README "Method notes"); C_k was measured on the box and pillbox of
benchmarks/error_bar_calibration.py (see ERROR_CONSTANT), and n is solved from it for the
target with a safety factor of 2 on the error.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from scipy.constants import c as C0

DEFAULT_ACCURACY = 1e-3
DEFAULT_ORDER = 2
WEYL_MARGIN = 1.3
NEAR_MARGIN = 1.1
# frequency error ≈ ERROR_CONSTANT[k] (2π/n)^(2k), n elements per wavelength (order k)
ERROR_CONSTANT = {1: 0.01, 2: 2e-4, 3: 1e-5}
SAFETY = 2.0
# Elements at the edges of dielectric fills shrink to this share of the fill's size: the DR
# fixture in 3D (ε_r = 24 puck on a support, quarter model, six modes) was within 1.7e-3 of
# its converged section without it (14532 DOFs), within 5.8e-4 with 0.5 (43414 DOFs) and
# 3.4e-4 with 0.3 (74732 DOFs)
FILL_EDGE_FACTOR = 0.5
# never fewer elements per wavelength than this, whatever the target (the resolution
# limits of post.resolution with room to spare)
MIN_PER_WAVELENGTH = {1: 6.0, 2: 3.0, 3: 2.5}


@dataclass(frozen=True)
class AccuracyPlan:
    target: float                  # relative frequency accuracy aimed at
    order: int
    curved: bool
    max_frequency_hz: float        # the highest frequency the sizing resolves
    per_wavelength: float          # elements per wavelength in each region at that frequency
    # the smallest radius of a curved metal part (a rod) when it is finer than the
    # wavelength sizing: no element larger than it (m); None otherwise
    size_cap: float | None = None
    # element size at the edges of dielectric fills relative to the region's (1: none)
    fill_edge_factor: float = 1.0

    def describe(self) -> str:
        return (f"aiming at a frequency accuracy of {self.target:.0e}: order {self.order}"
                + (", curved elements" if self.curved else "")
                + f", {self.per_wavelength:.3g} elements per wavelength up to "
                f"{self.max_frequency_hz / 1e9:.4g} GHz"
                + ("" if self.size_cap is None else
                   f", elements at most {self.size_cap * 1e3:.3g} mm (a curved metal part)")
                + ("" if self.fill_edge_factor == 1 else
                   f", {self.fill_edge_factor:g} of the size at the edges of dielectric fills"))


def per_wavelength(order: int, target: float) -> float:
    """Elements per wavelength for an expected error of target / SAFETY at order ``order``."""
    n = 2 * math.pi / (target / SAFETY / ERROR_CONSTANT[order]) ** (1.0 / (2 * order))
    return max(n, MIN_PER_WAVELENGTH[order])


def optical_volume(layout, index_of) -> float | None:
    """Σ V_i n_i³ of the part (m³): the space less its metal, each fill at its own index
    (``index_of(region)`` = sqrt(ε_r μ_r)); None when a solid cannot give its volume."""
    try:
        space = sum(s.volume() for s in layout.space) - sum(s.volume() for _, s in layout.metal)
        fills = [(name, s.volume()) for name, s in layout.fills]
    except AttributeError:
        return None
    background = index_of(layout.background) ** 3
    total = space * background + sum(v * (index_of(name) ** 3 - background)
                                      for name, v in fills)
    return total if total > 0 else None


def weyl_frequency(count: int, volume_m3: float) -> float:
    """The frequency below which Weyl's law counts ``count`` modes."""
    k = (3 * math.pi**2 * count / volume_m3) ** (1.0 / 3.0)
    return C0 * k / (2 * math.pi)


def metal_radius(layout) -> float | None:
    """The smallest radius of the part's curved metal solids (rods, posts), None without.

    A rod thinner than the wavelength sizing is faceted by a few elements around it, and
    the field that grows like 1/r towards it is poorly held: a shorted coaxial line's TEM
    modes (rod radius 3 mm) were 3.9e-3 low with 5 mm elements at order 2, within 9e-4 with
    elements no larger than the radius (our measurement, tests/test_accuracy_plan.py)."""
    radii = [s.radius for _, s in layout.metal if hasattr(s, "radius")]
    return min(radii) if radii else None


def has_curved_surfaces(layout) -> bool:
    solids = [*layout.space, *(s for _, s in layout.metal), *(s for _, s in layout.fills)]
    return any(type(s).__name__ not in ("Box",) for s in solids)


def plan(layout, index_of, *, modes: int, near_hz: float | None, order: int | None,
         target: float | None) -> AccuracyPlan | None:
    """The sizing for ``target`` (default DEFAULT_ACCURACY); None when the part's optical
    volume is unknown and no ``near`` is given."""
    target = DEFAULT_ACCURACY if target is None else target
    order = DEFAULT_ORDER if order is None else order
    if near_hz is not None:
        top = near_hz * NEAR_MARGIN
    else:
        volume = optical_volume(layout, index_of)
        if volume is None:
            return None
        top = weyl_frequency(modes, volume) * WEYL_MARGIN
    n = per_wavelength(order, target)
    rod = metal_radius(layout)
    return AccuracyPlan(target=target, order=order,
                        curved=order >= 2 and has_curved_surfaces(layout),
                        max_frequency_hz=top, per_wavelength=n,
                        size_cap=rod if rod is not None and rod < C0 / top / n else None,
                        fill_edge_factor=FILL_EDGE_FACTOR if layout.fills else 1.0)


def planned_case(case, *, order_given: bool):
    """``case`` with the a priori sizing of its accuracy target when it is a builder's 3D part
    that sets no element size (the [solve] order kept when ``order_given``); unchanged for
    an imported mesh, a body of revolution (its section sizing is its own, README), a
    periodic cell, an open part, or a material whose index has no single value."""
    from dataclasses import replace

    from .fem.absorber import AbsorbingMaterial
    from .geometry import builder_layout
    from .materials import VACUUM
    from .sizing import max_refractive_index

    g, mesh = case.geometry, case.mesh
    if (g.builder is None or mesh.size is not None or mesh.max_frequency_hz is not None
            or mesh.region_sizes or case.solve.azimuthal_orders is not None or case.periodic
            or any(isinstance(m, AbsorbingMaterial) for m in case.regions.values())):
        return case
    layout = builder_layout(g.builder, g.parameters)
    try:
        chosen = plan(layout,
                      lambda r: max_refractive_index(case.regions.get(r, VACUUM), layout),
                      # a cut part holds about one mode of the whole in 2 per cut plane
                      modes=case.solve.modes * 2 ** len(case.symmetry),
                      near_hz=case.solve.near_hz,
                      order=case.solve.order if order_given else None,
                      target=case.solve.accuracy)
    except (TypeError, ValueError):     # a tensor material: no single index
        return case
    if chosen is None:
        return case
    return replace(case, accuracy_plan=chosen,
                   mesh=replace(mesh, max_frequency_hz=chosen.max_frequency_hz,
                                per_wavelength=chosen.per_wavelength, size=chosen.size_cap,
                                curved=mesh.curved or chosen.curved,
                                fill_edge_refinement=chosen.fill_edge_factor),
                   solve=replace(case.solve, order=chosen.order))


def with_order(case, order: int):
    """A planned case solved at another element order (the command line's --order): the
    elements per wavelength that order needs for the same target."""
    from dataclasses import replace

    chosen = replace(case.accuracy_plan, order=order,
                     per_wavelength=per_wavelength(order, case.accuracy_plan.target))
    return replace(case, accuracy_plan=chosen,
                   mesh=replace(case.mesh, per_wavelength=chosen.per_wavelength),
                   solve=replace(case.solve, order=order))
