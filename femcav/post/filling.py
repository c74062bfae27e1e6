"""Magnetic filling factors of a mode, per region (3D).

The share of ∫ |H|² dV that lies in each region, and the share of the whole ∫ |H|² dV that
the component along a given axis a carries in each region, ∫_region |H·a|² dV / ∫ |H|² dV:
the filling factor a magnetic-resonance sample sees when the static field is normal to a
(the drive is the component along a); (C. P. Poole, Electron Spin Resonance, 2nd ed.,
1983, ch. 5, from memory). Without μ in the integrand: with μ_r = 1 throughout this is the
share of the magnetic energy, the counterpart of the electric filling factor of
post.losses. Shares are ratios, so the field's scale and a symmetry cut's halving cancel.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..fem.quadrature_fields import fields_at_quadrature
from ..fem.space import EdgeSpace

DEFAULT_AXIS = (0.0, 0.0, 1.0)


@dataclass(frozen=True)
class MagneticFilling:
    axis: tuple[float, float, float]    # unit vector
    total: dict[str, float]             # region -> share of ∫ |H|²
    along_axis: dict[str, float]        # region -> ∫_region |H·a|² / ∫ |H|²


def unit_axis(axis) -> tuple[float, float, float]:
    vector = np.asarray(axis, dtype=float)
    return tuple(float(v) for v in vector / np.linalg.norm(vector))


def region_shares(per_element: np.ndarray, per_element_axis: np.ndarray, cell_region,
                  region_names: dict[str, int], axis) -> MagneticFilling:
    """The filling factors from ∫|H|² and ∫|H·a|² per element (or per section cell)."""
    total = max(float(per_element.sum()), np.finfo(float).tiny)
    return MagneticFilling(
        axis=axis,
        total={name: float(per_element[cell_region == rid].sum()) / total
               for name, rid in region_names.items()},
        along_axis={name: float(per_element_axis[cell_region == rid].sum()) / total
                    for name, rid in region_names.items()})


def magnetic_filling(space: EdgeSpace, dofs: np.ndarray,
                     axis=DEFAULT_AXIS) -> MagneticFilling:
    """``dofs`` over all edges of ``space``."""
    axis = unit_axis(axis)
    fields = fields_at_quadrature(space, dofs)
    if space.form == "E":   # H ∝ ∇×E / μ_r; stiffness_coef is 1/μ_r
        H = fields.curl * space.stiffness_coef[None]
    else:
        H = fields.value
    dx = fields.dx
    squared = np.sum(np.sum(np.abs(H)**2, axis=0) * dx, axis=1)       # |H|²: complex in
    along = np.sum(np.abs(np.einsum("i,ijk->jk", np.asarray(axis), H)) ** 2 * dx, axis=1)
    mesh = space.model.mesh
    return region_shares(squared, along, mesh.tet_region, mesh.region_names, axis)
