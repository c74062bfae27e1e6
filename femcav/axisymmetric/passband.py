"""The TM010-like passband of a chain of cells: each mode's phase advance from E_z along
the axis (post/phase_advance.py), for the m = 0 solution of the axisymmetric solver.

E_z is sampled on a line parallel to the axis at a radius ρ of AXIS_OFFSET times the
section's radial extent: in the E form the carried e_z there; in the H form, by Stokes's
theorem on the disc of radius ρ, E_z ∝ 2 u / ρ² with u = r H_φ (an m = 0 mode's H_φ grows
like r off the axis, and 1/r of the curl would divide round-off by zero on it). Either is
E_z on the axis to O((k ρ)²), the same factor for every cell, which is all a phase advance
needs. The passband is taken to be the lowest ``cells`` TM-like modes with m = 0 (the
TM010-like cell resonances lie below every other m = 0 passband of an elliptical cell,
common practice).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import scipy.sparse as sp

from ..post.phase_advance import PhaseAdvance, cell_amplitudes, phase_advance
from .solve import AxisymmetricResult
from .space import OrderSpace

AXIS_OFFSET = 1e-2
SAMPLES_PER_CELL = 64


def axial_field(space: OrderSpace, z: np.ndarray):
    """The matrix taking an m = 0 mode's DOFs (over the space's kept DOFs) to a multiple
    of E_z on the axis at ``z`` (metres)."""
    section = space.model.section
    rho = AXIS_OFFSET * float(section.points[:, 0].max())
    points = np.vstack([np.full(len(z), rho), z])
    cells = _containing_triangles(section, points)
    if space.form == "E":
        sample = _probes(space.edge_basis, points, cells, 2).tocsr()[len(z):]  # E_r, then E_z
        full = sp.hstack([sample, sp.csr_matrix((len(z), space.node_basis.N))])
    else:
        sample = _probes(space.node_basis, points, cells, 1) * (2 / rho**2)
        full = sp.hstack([sp.csr_matrix((len(z), space.n_edge)), sample])
    return (full @ space.constraint.P).tocsr()


def _containing_triangles(section, points: np.ndarray) -> np.ndarray:
    """The triangle holding each point (2, n), found on the straight triangles through the
    corners: the samples run close to the axis, away from the curved walls."""
    from skfem import MeshTri

    n_corners = int(section.triangles.max()) + 1
    linear = MeshTri(np.ascontiguousarray(section.points[:n_corners].T),
                     np.ascontiguousarray(section.triangles.T))
    return linear.element_finder()(*points)


def _probes(basis, points: np.ndarray, cells: np.ndarray, components: int):
    """The matrix taking a field's DOFs to its values at ``points`` (2, n) in ``cells``, all
    components, one block of n rows each (scikit-fem's Basis.probes has no element finder on
    curved triangles, and its order-3 edge element takes one set of reference points per
    call: so one call per triangle)."""
    n = points.shape[1]
    rows, columns, values = [], [], []
    for cell in np.unique(cells):
        at = np.flatnonzero(cells == cell)
        reference = basis.mapping.invF(points[:, at][:, None, :], tind=np.array([cell]))[:, 0]
        for k in range(basis.Nbfun):
            value = np.reshape(np.asarray(basis.elem.gbasis(basis.mapping, reference, k,
                                                            tind=np.array([cell]))[0]),
                               (components, len(at)))
            for c in range(components):
                rows.append(c * n + at)
                columns.append(np.full(len(at), basis.element_dofs[k, cell]))
                values.append(value[c])
    return sp.coo_matrix((np.concatenate(values),
                          (np.concatenate(rows), np.concatenate(columns))),
                         shape=(components * n, basis.N))


def with_passband_labels(result: AxisymmetricResult, spans: list[tuple[float, float]],
                         electric_ends: bool) -> AxisymmetricResult:
    """``result`` with the phase advance and label of each mode of the TM010-like passband
    of the chain of cells whose (z at one iris, z at the next) are ``spans``;
    ``electric_ends``: the chain is closed by electric walls at its end irises (else by
    magnetic walls there, or it ends in beam pipes)."""
    if len(spans) < 2 or 0 not in result.spaces:
        return result
    band = [m for m in result.modes if m.m == 0 and m.field_class == "TM-like"][:len(spans)]
    z = np.concatenate([np.linspace(z0, z1, SAMPLES_PER_CELL) for z0, z1 in spans])
    found: dict[int, PhaseAdvance] = {}
    sample = axial_field(result.spaces[0], z) if band else None
    for mode in band:
        ez = sample @ mode.dofs
        advance = phase_advance(cell_amplitudes(z, ez, spans), electric_ends)
        if advance is not None:
            found[mode.index] = advance
    return replace(result, modes=[
        replace(m, label=found[m.index].label, phase_advance_rad=found[m.index].phase_rad)
        if m.index in found else m for m in result.modes])
