"""Is a mode resolved by the mesh? Elements per local wavelength where its energy is.

The algebra of a mode can converge perfectly (residual, divergence and orthogonality all at
round-off) while the mesh is far too coarse for the field: the eigenpair is then one of the
discrete problem, not of the part. With elements of order k the eigenvalue error of a mode
grows like (h/λ)^(2k), λ = c / (f sqrt(ε_r μ_r)) the local wavelength and h the element
size (Boffi, Acta Numerica 19 (2010), from memory), and the error is a sum over the
elements weighted by the mode's energy there. So the measure is the energy-weighted power
mean

    (h/λ)_eff = ( Σ_e w_e (h_e/λ_e)^(2k) / Σ_e w_e )^(1/(2k)),

w_e the mode's electric plus magnetic energy in element e and h_e its mean edge length; the
mode's points per wavelength are 1 / (h/λ)_eff. Regions that hold little of the mode's
energy count little; a coarse region where the mode lives counts in full.

MIN_POINTS_PER_WAVELENGTH is the threshold per element order. Calibrated on the empty
rectangular box 22.86 x 10.16 x 30 mm (closed form: D. M. Pozar, Microwave Engineering,
4th ed., §6.3) in the E form: order 1 on meshes of 4, 3 and 2 mm (800 modes), orders 2 and 3
on 6 and 4 mm and 8 and 6 mm (700 modes each), frequencies of the sorted lists compared.
The relative frequency error stayed below C / ppw^(2k) with C = 0.67, 0.22 and 0.27 for
orders 1, 2 and 3; the largest error of any mode at or above the threshold was

    order 1, >= 4 per wavelength:   2.4 %  (bound 0.67 / 4² = 4.2 %; 5.0 % at >= 3)
    order 2, >= 1.6 per wavelength: 1.6 %  (bound 0.22 / 1.6⁴ = 3.4 %; 3.3 % at >= 1.2)
    order 3, >= 1.4 per wavelength: 0.3 %  (bound 0.27 / 1.4⁶ = 3.6 %; 1.3 % at >= 1.2)

so a mode reported as resolved is within a few per cent (typically much better: the median
error at the threshold was 1.2 %, 0.2 % and 0.15 %).
(scripts/resolution_calibration.py repeats the measurement, about 1 min of CPU). A mode below the
threshold is reported as not resolved: its frequency may be off by more than a few per
cent. The check is about the wavelength only: the geometric error of curved walls on flat
facets, and field singularities at sharp edges, are not in it (error bars cover them).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import c as C0

from ..fem.coefficients import isotropic_part, quadratic
from ..fem.quadrature_fields import fields_at_quadrature

MIN_POINTS_PER_WAVELENGTH = {1: 4.0, 2: 1.6, 3: 1.4}
# C of the bound C / ppw^(2k) on the relative frequency error measured above, per order
ERROR_BOUND = {1: 0.67, 2: 0.22, 3: 0.27}

REFINE_ADVICE = ("refine the mesh ([mesh] size or max_frequency) or raise [solve] order, "
                 "or ask for fewer or lower modes")


@dataclass(frozen=True)
class Resolution:
    points_per_wavelength: float    # elements per local wavelength, energy-weighted
    required: float                 # MIN_POINTS_PER_WAVELENGTH of the element order

    @property
    def resolved(self) -> bool:
        return self.points_per_wavelength >= self.required


def mode_resolution(frequency_hz: float, order: int, element_size: np.ndarray,
                    refractive_index: np.ndarray, energy: np.ndarray) -> Resolution:
    """The resolution of one mode from per-element sizes (m), sqrt(ε_r μ_r) and energy
    (any scale, >= 0)."""
    optical_size = element_size * refractive_index
    largest = float(np.max(optical_size, initial=0.0))
    return resolution_from_sums(frequency_hz, order, largest,
                                *resolution_sums(order, optical_size, largest, energy))


def resolution_sums(order: int, optical_size: np.ndarray, largest: float,
                    energy: np.ndarray) -> tuple[float, float]:
    """(Σ w (s/largest)^(2k), Σ w) over some elements, s = h sqrt(ε_r μ_r) their optical
    size and ``largest`` that of the whole mesh: sums that add over parts of the mesh."""
    weight = np.clip(np.asarray(energy, dtype=float), 0.0, None)
    if not largest > 0:
        return 0.0, float(weight.sum())
    # scaled power mean: no overflow or underflow of (h/λ)^(2k)
    return float(np.sum(weight * (optical_size / largest) ** (2 * order))), float(weight.sum())


def resolution_from_sums(frequency_hz: float, order: int, largest: float, weighted: float,
                         total: float) -> Resolution:
    """The resolution from resolution_sums over the whole mesh; h / λ = s f / c."""
    required = MIN_POINTS_PER_WAVELENGTH[order]
    scale = largest * frequency_hz / C0
    if not frequency_hz > 0 or not total > 0 or not scale > 0:
        return Resolution(points_per_wavelength=math.inf, required=required)
    mean = scale * (weighted / total) ** (1.0 / (2 * order))
    return Resolution(points_per_wavelength=float(1.0 / mean), required=required)


def resolvable_frequency_hz(frequency_hz: float, resolution: Resolution) -> float:
    """Roughly the highest frequency the mesh resolves, from one mode: points per
    wavelength fall like 1/f for a fixed field shape."""
    return frequency_hz * resolution.points_per_wavelength / resolution.required


def mean_edge_length(points: np.ndarray, cells: np.ndarray) -> np.ndarray:
    """The mean length of the edges of each cell (triangles or tetrahedra, corner nodes
    in the columns of ``cells``)."""
    corners = points[cells]
    n = cells.shape[1]
    lengths = [np.linalg.norm(corners[:, i] - corners[:, j], axis=1)
               for i in range(n) for j in range(i + 1, n)]
    return np.mean(lengths, axis=0)


def unresolved_summary(modes, near_hz: float | None, format_frequency) -> list[str]:
    """Plain lines for stderr about the modes the mesh does not resolve: which, the
    advice, and (with a target) whether the target lies above what the mesh holds."""
    bad = [m for m in modes if m.resolution is not None and not m.resolution.resolved]
    if not bad:
        return []
    first = bad[0]
    lines = [f"{len(bad)} of {len(modes)} modes are not resolved by the mesh (fewer than "
             f"{first.resolution.required:g} elements per wavelength where their energy is; "
             f"mode {first.index} has {first.resolution.points_per_wavelength:.2g}): their "
             f"frequencies may be off by more than a few per cent; {REFINE_ADVICE}"]
    limit = max(resolvable_frequency_hz(m.frequency_hz, m.resolution) for m in modes
                if m.resolution is not None)
    if near_hz is not None and near_hz > limit:
        found = [m.frequency_hz for m in modes]
        lines.append(f"the target {format_frequency(near_hz, 4)} is above what this mesh can "
                     f"resolve (about {format_frequency(limit, 3)}); the modes returned "
                     f"({format_frequency(min(found), 4)} to {format_frequency(max(found), 4)}) "
                     "are the discrete problem's nearest, not the part's modes near the target")
    return lines


def edge_space_scales(space) -> tuple[np.ndarray, np.ndarray]:
    """Per tetrahedron of a 3D edge space: mean edge length (m) and sqrt(ε_r μ_r) (the
    mean over its quadrature points; in either form mass / stiffness coefficient is ε_r μ_r)."""
    mesh = space.mesh
    h = mean_edge_length(mesh.p.T, mesh.t.T)
    # |.|: inside an absorbing layer (fem.absorber) the stretched tensors' real parts may
    # have either sign; their size is what sets the local wavelength there
    index = np.sqrt(np.abs(np.mean(isotropic_part(space.mass_coef)
                                   / isotropic_part(space.stiffness_coef), axis=1)))
    return h, index


def edge_space_energy(space, dofs: np.ndarray, k0_squared: float, part=None) -> np.ndarray:
    """Electric plus magnetic energy of a mode per tetrahedron (relative scale): the mass
    term plus the curl term over k0² (their sums are equal at resonance); of the elements
    of ``part`` only (fields_at_quadrature) when given."""
    fields = fields_at_quadrature(space, dofs, part)
    rows = slice(None) if part is None else part[0]
    density = (quadratic(space.mass_coef[rows], fields.value)
               + quadratic(space.stiffness_coef[rows], fields.curl)
               / max(abs(k0_squared), np.finfo(float).tiny))
    return np.sum(density * fields.dx, axis=1)


def expected_error(resolution: Resolution | None, order: int) -> float | None:
    """The relative frequency error a mode of this resolution stayed under on the box
    calibration above, ERROR_BOUND / ppw^(2k): what a table without error bars prints its
    digits for (the geometric error of faceted curved walls and the slower convergence at
    singular edges are not in it). None without a resolution or order."""
    if resolution is None or order not in ERROR_BOUND:
        return None
    ppw = resolution.points_per_wavelength
    if not (math.isfinite(ppw) and ppw > 0):
        return None
    return ERROR_BOUND[order] / ppw ** (2 * order)
