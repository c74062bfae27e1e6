"""The fields an axisymmetric mode's beam figures need (post.beam), on its section, scaled to
1 J stored (axisymmetric.revolve: W = (ε0/2) ∫ ε_r |E|² dV, the φ integral 2π for m = 0).

The beam runs along the z axis (the only straight line a body of revolution keeps), where
only m = 0 has an axial field (for m >= 1, e_z = 0 on the axis). The field on the axis is
e_z on the section's axis edges, with Gauss points on each edge (clipped to the line).

On the walls (every boundary edge off the axis that is not PMC: named PEC and metal walls
and the unnamed enclosure): with E = (e_r cos mφ, e_φ sin mφ, e_z cos mφ) and H in
quadrature, the surface fields |E·n| (∝ cos mφ) and the two tangential parts of H (H_φ ∝
cos mφ, the meridional one ∝ sin mφ) peak at different angles for m >= 1: the peak is the
larger of the two there, and the root-sum-square for m = 0. Each edge is sampled, then the
best few edges are searched (samples ever closer around the best) for the largest value of
the finite-element field, so that a peak between samples, or at an edge's end on the axis,
is found to about 1e-7 of the edge's length.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ..errors import InputError
from ..post.beam import BeamLine, LineIntegrals, SurfacePeaks, line_integrals, points_per_interval
from ..post.beam_fields import interpolate_at
from ..walls import PMC
from .revolve import _stored_energy
from .space import OrderSpace, facets_of

# the reference triangle's edges in scikit-fem's order: (0,1), (1,2), (0,2)
_REFERENCE_EDGES = np.array([[[0.0, 0.0], [1.0, 0.0]], [[1.0, 0.0], [0.0, 1.0]],
                             [[0.0, 0.0], [0.0, 1.0]]])
SAMPLES_PER_EDGE = 9
SEARCHED_EDGES = 3
# distance of the first and last samples from an edge's ends (relative), which keeps the
# u / r of points on the axis finite
END_OFFSET = 1e-9


def default_axis_line(space: OrderSpace) -> tuple[np.ndarray, np.ndarray]:
    z = space.model.section.points[:, 1]
    return np.array([0.0, 0.0, z.min()]), np.array([0.0, 0.0, z.max()])


def _axis_facets(space: OrderSpace) -> np.ndarray:
    mesh = space.edge_basis.mesh
    boundary = mesh.boundary_facets()
    return boundary[np.all(mesh.p[0, mesh.facets[:, boundary]] == 0.0, axis=0)]


def _split(space: OrderSpace, dofs: np.ndarray):
    full = space.constraint.expand(dofs)
    return full[:space.n_edge], full[space.n_edge:]


def _section_fields(space: OrderSpace, dofs, X: np.ndarray, cells: np.ndarray):
    """(e_t (2, n, q), curl e_t (n, q), u (n, q), ∇u (2, n, q)) of the carried field at the
    reference points ``X`` (2, q) of each of ``cells``."""
    e_dofs, u_dofs = _split(space, dofs)
    eb, nb = space.edge_basis, space.node_basis
    e, curl = interpolate_at(eb.elem, eb.mapping, eb.element_dofs, e_dofs, X, cells,
                             ("value", "curl"))
    u, grad = interpolate_at(nb.elem, nb.mapping, nb.element_dofs, u_dofs, X, cells,
                             ("value", "grad"))
    return e, curl, u, grad


def _on_edges(mesh, facets: np.ndarray):
    """Per boundary facet: the cell behind it and its local edge's reference ends (2, n)."""
    cells = mesh.f2t[0, facets]
    local = np.argmax(mesh.t2f[:, cells] == facets, axis=0)
    return cells, local


def _scale(space: OrderSpace) -> float:
    """The factor that takes the M-normalised carried field to 1 J stored."""
    return 1.0 / math.sqrt(_stored_energy(space))


def line_field_integrals(space: OrderSpace, dofs, omega: float, line: BeamLine
                         ) -> LineIntegrals:
    """∫ E_s e^{jωs/(βc)} ds and ∫ |E_s| ds along the part of the z axis that ``line``
    covers, at 1 J stored."""
    if space.form != "E":
        raise InputError("beam figures of a body of revolution need the E form (the field "
                         "on the axis of the H form is a limit of 1/r terms)",
                         option="form")
    mesh = space.edge_basis.mesh
    mapping = space.edge_basis.mapping
    cells, local = _on_edges(mesh, _axis_facets(space))
    z_low = min(line.start[2], line.end[2])
    z_high = max(line.start[2], line.end[2])
    sign = 1.0 if line.end[2] >= line.start[2] else -1.0
    count = points_per_interval(space.order, float(np.ptp(mesh.p[1])), omega, line.velocity)
    x_gauss, w_gauss = np.polynomial.legendre.leggauss(count)
    s_all, w_all, e_all = [], [], []
    for j in range(3):
        a, b = _REFERENCE_EDGES[j]
        group = cells[local == j]
        if group.size == 0:
            continue
        ends = mapping.F(np.array([a, b]).T, tind=group)[1]        # z at t = 0, 1: (n, 2)
        t0 = np.clip((z_low - ends[:, 0]) / (ends[:, 1] - ends[:, 0]), 0, 1)
        t1 = np.clip((z_high - ends[:, 0]) / (ends[:, 1] - ends[:, 0]), 0, 1)
        t0, t1 = np.minimum(t0, t1), np.maximum(t0, t1)
        # cells whose edge the line covers alike share their points (all of them, for the
        # default line); the few clipped at the line's ends are done one by one
        for lo, hi in {(float(u), float(v)) for u, v in zip(t0, t1) if v > u}:
            chosen = group[(t0 == lo) & (t1 == hi)]
            t = lo + (hi - lo) * (x_gauss + 1) / 2
            X = a[:, None] + np.outer(b - a, t)
            e, _, _, _ = _section_fields(space, dofs, X, chosen)
            z = mapping.F(X, tind=chosen)[1]                        # (n, q)
            span = np.abs(mapping.F(np.array([a, b]).T, tind=chosen)[1] @ [-1.0, 1.0])
            s_all.append(sign * (z - line.start[2]))
            w_all.append(span[:, None] * (hi - lo) / 2 * w_gauss[None, :])
            e_all.append(sign * e[1] * _scale(space))
    if not s_all:
        return LineIntegrals(phased=0j, absolute=0.0)
    return line_integrals(*(np.concatenate([v.ravel() for v in arrays])
                            for arrays in (s_all, w_all, e_all)), omega, line.velocity)


def _conducting_facets(space: OrderSpace) -> np.ndarray:
    model, section = space.model, space.model.section
    mesh = space.edge_basis.mesh
    boundary = mesh.boundary_facets()
    pmc = [facets_of(mesh, section.edges[section.edge_tag == tag])
           for name, tag in section.wall_names.items()
           if name != "axis" and model.wall_kind(name) == PMC]
    return np.setdiff1d(boundary, np.concatenate([_axis_facets(space), *pmc]))


class _WallSampler:
    """The surface fields at parameter t along the conducting boundary edges."""

    def __init__(self, space: OrderSpace, dofs, omega: float):
        self.space, self.dofs, self.omega = space, dofs, omega
        self.facets = _conducting_facets(space)
        self.cells, self.local = _on_edges(space.edge_basis.mesh, self.facets)
        section, materials = space.model.section, space.model.materials
        region_of = {rid: name for name, rid in section.region_names.items()}
        for name in section.region_names:
            materials[name].require_isotropic(name, "the peak surface fields")
        self.materials = [materials[region_of[r]] for r in section.tri_region[self.cells]]
        self.scale = _scale(space)

    def fields(self, t: np.ndarray, rows: np.ndarray):
        """(|E·n|, |H_t|, points (2, n, q)) at parameters ``t`` (q,) on the edges ``rows``,
        all of one local edge index."""
        space, cells = self.space, self.cells[rows]
        a, b = _REFERENCE_EDGES[self.local[rows[0]]]
        X = a[:, None] + np.outer(b - a, t)
        mapping = space.edge_basis.mapping
        x = mapping.F(X, tind=cells)                                  # (2, n, q)
        tangent = np.einsum("ijnq,j->inq", mapping.DF(X, tind=cells), b - a)
        tangent /= np.linalg.norm(tangent, axis=0)
        normal = np.array([tangent[1], -tangent[0]])
        e, curl, u, grad = _section_fields(space, self.dofs, X, cells)
        r = x[0]
        meridional = (grad + space.m * e) / r           # (∇u + m f_t) / r
        mu = np.array([self.materials[i].mu_r for i in rows])[:, None]
        if space.form == "E":
            to_h = 1.0 / (self.omega * mu_0 * mu)
            e_normal = np.abs(np.sum(e * normal, axis=0))
            parts = (curl * to_h, np.sum(meridional * normal, axis=0) * to_h)
        else:
            eps = np.array([[self.materials[i].eps_at(x[0, k, :], 0 * x[0, k, :],
                                                      x[1, k, :])]
                            for k, i in enumerate(rows)])[:, 0]
            to_e = 1.0 / (self.omega * epsilon_0 * eps)
            e_normal = np.abs(np.sum(meridional * tangent, axis=0)) * to_e
            parts = (u / r, np.sum(e * tangent, axis=0))
        # |·|: a periodic cell's travelling wave is complex
        h_t = (np.hypot(*map(np.abs, parts)) if space.m == 0
               else np.maximum(*map(np.abs, parts)))
        return e_normal * self.scale, h_t * self.scale, x


def surface_peaks(space: OrderSpace, dofs, omega: float) -> SurfacePeaks | None:
    """The largest |E·n| and μ0 |H_t| on the conducting walls at 1 J stored, and where (as a
    3D point at φ = 0, where the cos mφ parts peak; for m = 0 the peak is a ring)."""
    sampler = _WallSampler(space, dofs, omega)
    if sampler.facets.size == 0:
        return None
    t = np.linspace(END_OFFSET, 1 - END_OFFSET, SAMPLES_PER_EDGE)
    n = sampler.facets.size
    sampled = np.zeros((2, n))              # per edge, the largest sample of each field
    for j in range(3):
        rows = np.flatnonzero(sampler.local == j)
        if rows.size:
            e_n, h_t, _ = sampler.fields(t, rows)
            sampled[0, rows], sampled[1, rows] = e_n.max(axis=1), h_t.max(axis=1)
    peaks = []
    for which in (0, 1):
        # the peak may sit on a neighbour of the edge with the best sample (next to a shared
        # end, where the finite-element field jumps a little): search the best few
        best = max(_zoom(lambda t, row=row, which=which: sampler.fields(
            t, np.array([row]))[which][0], row) for row in
            np.argsort(sampled[which])[-SEARCHED_EDGES:])
        value, row, s = best
        x = sampler.fields(np.array([s]), np.array([row]))[2][:, 0, 0]
        peaks.append((value, np.array([x[0], 0.0, x[1]])))
    (e_peak, e_at), (h_peak, h_at) = peaks
    return SurfacePeaks(e_peak_v_per_m=e_peak, e_peak_at=e_at, b_peak_t=mu_0 * h_peak,
                        b_peak_at=h_at)


def _zoom(values, row: int, points: int = 21, rounds: int = 7) -> tuple[float, int, float]:
    """(largest value, ``row``, t) of ``values``(t) on [END_OFFSET, 1 - END_OFFSET]: sample,
    then sample again around the best point ten times closer, ``rounds`` times (the field
    along an edge is a smooth polynomial; the ends are always among the first samples)."""
    low, high = END_OFFSET, 1 - END_OFFSET
    best_value, best_t = -np.inf, low
    for _ in range(rounds):
        t = np.linspace(low, high, points)
        v = values(t)
        k = int(np.argmax(v))
        if v[k] > best_value:
            best_value, best_t = float(v[k]), float(t[k])
        step = (high - low) / (points - 1)
        low, high = max(END_OFFSET, best_t - step), min(1 - END_OFFSET, best_t + step)
    return best_value, int(row), best_t
