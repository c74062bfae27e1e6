"""A body of revolution periodic along z: the section's two end lines tied with a phase.

A pair (A, B) of boundary lines of the meridional section, both at constant z and B the
translate of A along z, says that the field on B is the field on A times e^{-jφ} (Floquet),
for every azimuthal order alike. The lines must be meshed alike (every vertex of B has its
translate on A).

The node DOFs (u = r e_φ, Lagrange) are point values: a DOF on B equals the DOF at the same r
on A. The edge DOFs (e_t, Nédélec) are moments whose parametrisation depends on each edge's
vertex order, so each B edge's DOFs are written in its partner's by matching the tangential
traces (e_r along a line of constant z) at Gauss points: the trace on an edge depends on that
edge's DOFs only, so the match is exact. The potentials p of the kernel fields (∇p, -m p)
get the node ties with the same phase. The rest is fem.periodic.tied_constraint, as in 3D.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from ..errors import InputError
from ..fem.constraints import Constraint
from ..fem.periodic import REAL_TIE, tied_constraint

FIELD = "periodic.pair"
# points match when they are this fraction of the section's size apart
MATCH_FRACTION = 1e-7


def pair_lines(model, mesh, facets_of) -> list[tuple[np.ndarray, np.ndarray, float]]:
    """Per pair: the facets of line A, the facets of line B (as mesh facet indices) and the
    shift in z from A to B; refused unless both are lines of constant z."""
    section = model.section
    out = []
    for pair in model.periodic:
        facets = []
        for name in (pair.wall_a, pair.wall_b):
            f = facets_of(mesh, section.edges[section.edge_tag == section.wall_names[name]])
            z = mesh.p[1, mesh.facets[:, f]]
            if f.size == 0 or np.ptp(z) > MATCH_FRACTION * _size(mesh):
                raise InputError(f"the periodic boundary {name!r} of the section is not a line "
                                 "of constant z; a body of revolution repeats along z, so its "
                                 "cell ends are lines z = const", field=FIELD)
            facets.append(f)
        shift = float(mesh.p[1, mesh.facets[0, facets[1][0]]]
                      - mesh.p[1, mesh.facets[0, facets[0][0]]])
        out.append((facets[0], facets[1], shift))
    return out


def section_periodic_constraints(model, edge_basis, node_basis, lines, fixed_edge,
                                 fixed_node, zero_potential) -> tuple[Constraint, Constraint]:
    """The constraint of the stacked [edge, node] DOFs and that of the kernel potentials for
    ``model.periodic`` (``lines`` from pair_lines), with the walls' fixed DOFs."""
    n_edge = edge_basis.N
    factors = [np.exp(-1j * pair.phase_rad) for pair in model.periodic]
    if all(abs(f.imag) < REAL_TIE for f in factors):
        factors = [float(np.round(f.real)) for f in factors]
    stacked, potential = [], []
    for (facets_a, facets_b, shift), factor in zip(lines, factors):
        rows, cols = _node_partners(node_basis, facets_a, facets_b, shift)
        node_tie = (rows, cols, np.full(rows.size, factor, dtype=np.result_type(factor, float)))
        potential.append(node_tie)
        e_rows, e_cols, e_vals = _edge_ties(edge_basis, facets_a, facets_b, shift)
        stacked.append((np.concatenate([e_rows, n_edge + rows]),
                        np.concatenate([e_cols, n_edge + cols]),
                        np.concatenate([factor * e_vals, node_tie[2]])))
    fixed = np.concatenate([np.asarray(sorted(fixed_edge), dtype=np.int64),
                            n_edge + np.asarray(sorted(fixed_node), dtype=np.int64)])
    return (tied_constraint(n_edge + node_basis.N, stacked, fixed),
            tied_constraint(node_basis.N, potential,
                            np.asarray(sorted(zero_potential), dtype=np.int64)))


def _size(mesh) -> float:
    return float(np.ptp(mesh.p, axis=1).max())


def _node_partners(basis, facets_a, facets_b, shift):
    """B's node DOFs and their partners on A (same r, z - shift): Lagrange DOFs are values."""
    dofs_a = np.unique(basis.get_dofs(facets_a).all())
    dofs_b = np.unique(basis.get_dofs(facets_b).all())
    where_a = basis.doflocs[:, dofs_a].T
    where_b = basis.doflocs[:, dofs_b].T - np.array([0.0, shift])
    distance, nearest = cKDTree(where_a).query(where_b)
    worst = int(np.argmax(distance)) if distance.size else 0
    if dofs_a.size != dofs_b.size or (distance.size and distance[worst] > MATCH_FRACTION
                                      * _size(basis.mesh)):
        r, z = basis.doflocs[:, dofs_b[worst]] if dofs_b.size else (np.nan, np.nan)
        raise InputError(f"the periodic lines are not meshed alike: the node at (r, z) = "
                         f"({r * 1e3:.4g}, {z * 1e3:.4g}) mm has no partner moved by "
                         f"{-shift * 1e3:.4g} mm in z; mesh the two lines identically",
                         field=FIELD)
    return dofs_b, dofs_a[nearest]


def _edge_ties(basis, facets_a, facets_b, shift):
    """Each B edge's DOFs as combinations of its partner's, from the tangential traces."""
    mesh = basis.mesh
    k = basis.dofs.facet_dofs.shape[0]          # DOFs per edge
    mid_a = mesh.p[:, mesh.facets[:, facets_a]].mean(axis=1)
    mid_b = mesh.p[:, mesh.facets[:, facets_b]].mean(axis=1) - np.array([[0.0], [shift]])
    distance, partner = cKDTree(mid_a.T).query(mid_b.T)
    if distance.size and distance.max() > MATCH_FRACTION * _size(mesh):
        raise InputError("the periodic lines are not meshed alike (an edge of the second has "
                         "no translate on the first); mesh the two lines identically",
                         field=FIELD)
    matched_a = facets_a[partner]
    traces = [_edge_traces(basis, facets, k) for facets in (matched_a, facets_b)]
    rows, cols, vals = [], [], []
    for f in range(facets_b.size):
        transfer, *_ = np.linalg.lstsq(traces[1][f], traces[0][f], rcond=None)
        rows.append(np.repeat(basis.dofs.facet_dofs[:, facets_b[f]], k))
        cols.append(np.tile(basis.dofs.facet_dofs[:, matched_a[f]], k))
        vals.append(transfer.ravel())
    vals = np.concatenate(vals) if vals else np.zeros(0)
    vals[np.abs(vals) < 1e-12] = 0.0
    return np.concatenate(rows), np.concatenate(cols), vals


# the reference triangle's edges in scikit-fem's order: (0,1), (1,2), (0,2)
_REFERENCE_EDGES = np.array([[[0.0, 0.0], [1.0, 0.0]], [[1.0, 0.0], [0.0, 1.0]],
                             [[0.0, 0.0], [0.0, 1.0]]])


def _edge_traces(basis, facets: np.ndarray, k: int) -> np.ndarray:
    """(n_facets, n_points, k): e_r of each facet's k edge functions at Gauss points along
    it, the points in increasing r (the same points on a line and on its translate). Cell
    bases per local edge index: scikit-fem's facet bases do not take the third-order
    Nédélec element."""
    from skfem import CellBasis

    mesh = basis.mesh
    s, w = np.polynomial.legendre.leggauss(k + 1)
    s = (s + 1) / 2
    cells = mesh.f2t[0, facets]
    local_edge = np.argmax(mesh.t2f[:, cells] == facets, axis=0)
    out = np.empty((facets.size, s.size, k))
    for j in range(3):
        chosen = np.flatnonzero(local_edge == j)
        if not chosen.size:
            continue
        a, b = _REFERENCE_EDGES[j]
        X = a[:, None] + np.outer(b - a, s)
        cb = CellBasis(mesh, basis.elem, elements=cells[chosen], quadrature=(X, w / 2))
        r = cb.mapping.F(X, tind=cells[chosen])[0]                     # (n, n_points)
        order = np.argsort(r, axis=1)
        values = np.stack([np.take_along_axis(np.asarray(cb.basis[i][0])[0], order,
                                              axis=1) for i in range(len(cb.basis))])
        local = _facet_local(cb.element_dofs, basis.dofs.facet_dofs[:, facets[chosen]])
        rows = np.arange(chosen.size)
        out[chosen] = np.stack([values[local[i], rows] for i in range(k)], axis=2)
    return out


def _facet_local(element_dofs: np.ndarray, facet_dofs: np.ndarray) -> np.ndarray:
    """(k, n_facets): the local basis index of each of a facet's global DOFs in the element
    behind it (``element_dofs``: (n_local, n_facets) global DOFs of those elements)."""
    out = np.empty(facet_dofs.shape, dtype=np.int64)
    for j in range(facet_dofs.shape[0]):
        out[j] = np.argmax(element_dofs == facet_dofs[j][None, :], axis=0)
    return out
