"""E and H of an axisymmetric mode at 3D points, and its magnetic filling factors.

A point (x, y, z) is taken at r = sqrt(x² + y²) on the section and azimuth φ = atan2(y, x).
For m >= 1 the mode is one member of a cos mφ / sin mφ pair; the one reported is the member
of axisymmetric.revolve (the pictures and fields.vtu): the carried field (E in the E form, H
in the H form) has its r and z components ∝ cos mφ and its φ component ∝ sin mφ, so in the
E form E_r and E_z are largest on the plane φ = 0 (the x-z half-plane x > 0). That member
alone stores 1 J in the whole part (revolve._stored_energy). Complex phases as in 3D
(post.point_fields): E real, H = j ∇×E / (ω μ0 μ_r).

On the axis the section formulas divide by r. A point closer to the axis than half the size
h of the triangle it lies in takes the components that divide by r (E_φ, and H_r and H_z
in the E form; the other field in the H form) extrapolated quadratically from r = h/2,
3h/4 and h to its own r; exactly on the axis, the components that must vanish there are
set to zero: r and φ for m = 0, z for m = 1, all for m >= 2 (a field single-valued
on the axis; common practice).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ..fem.point_location import basis_values, locate, reference_coordinates
from ..post.filling import MagneticFilling, region_shares, unit_axis
from ..post.point_fields import OUTSIDE_SLACK, PointFields, materials_at
from .revolve import _stored_energy
from .space import OrderSpace


class _Corners:
    """What fem.point_location.locate reads of a mesh: corner coordinates and triangles."""

    def __init__(self, mesh):
        self.p = mesh.p
        self.t = mesh.t[:3]


def section_outside(section, rz: np.ndarray, slack: float = OUTSIDE_SLACK) -> np.ndarray:
    """Which of the points ``rz`` (n, 2) lie outside the section (a MeridionalMesh) by
    more than ``slack`` of their nearest triangle (post.point_fields.OUTSIDE_SLACK)."""
    class Mesh:
        p = np.ascontiguousarray(section.points[:, :2].T)
        t = np.ascontiguousarray(section.triangles.T)
    return locate(Mesh, np.ascontiguousarray(rz.T)).min_barycentric < -slack


def _locate(space: OrderSpace, rz: np.ndarray):
    """The triangle of each section point ``rz`` (n, 2) and the point's reference
    coordinates in it."""
    mesh = space.edge_basis.mesh
    where = locate(_Corners(mesh), np.ascontiguousarray(rz.T))
    X = reference_coordinates(space.edge_basis.mapping, np.ascontiguousarray(rz.T), where)
    return where.cells, X


def _section_fields(space: OrderSpace, full: np.ndarray, cells, X, r):
    """F and ∇×F as (3, n) (r, φ, z) amplitudes at reference points X (2, n, 1) of
    ``cells``, one point per cell (fem.point_location.basis_values)."""
    eb, nb = space.edge_basis, space.node_basis
    edge, node = full[:space.n_edge], full[space.n_edge:]

    def summed(basis, dofs, part):
        return sum(basis_values(basis, X, i, cells, part)[..., 0]
                   * dofs[basis.element_dofs[i, cells]] for i in range(basis.Nbfun))

    e_val, e_curl = summed(eb, edge, "value"), summed(eb, edge, "curl")
    u_val, u_grad = summed(nb, node, "value"), summed(nb, node, "grad")
    meridional = (u_grad + space.m * e_val) / r
    F = np.array([e_val[0], u_val / r, e_val[1]])
    curl = np.array([-meridional[1], -e_curl, meridional[0]])
    return F, curl


def _amplitudes_at(space: OrderSpace, full: np.ndarray, rz: np.ndarray):
    """(r, φ, z) amplitudes, without azimuthal factors, of the carried field F and of ∇×F
    at the section points ``rz`` (n, 2), and the triangle of each point."""
    cells, X = _locate(space, rz)
    with np.errstate(divide="ignore", invalid="ignore"):   # on the axis: replaced below
        return _section_fields(space, full, cells, X, rz[:, 0]), cells


# On the axis the components divided by r (u / r of the carried field, the r and z parts
# of its curl) are taken from these multiples of the triangle size, extrapolated.
OFF_AXIS = (0.5, 0.75, 1.0)


def _near_axis(space: OrderSpace, full: np.ndarray, rz: np.ndarray):
    """F and ∇×F amplitudes at ``rz``; where r < h/2, the parts divided by r extrapolated
    from off the axis (quadratic through OFF_AXIS times h)."""
    (F, curl), cells = _amplitudes_at(space, full, rz)
    corners = space.edge_basis.mesh.p[:, space.edge_basis.mesh.t[:3, cells]]   # (2, 3, n)
    h = np.max(np.linalg.norm(corners - np.roll(corners, 1, axis=1), axis=0), axis=0)
    near = np.flatnonzero(rz[:, 0] < OFF_AXIS[0] * h)
    if near.size:
        radii = [f * h[near] for f in OFF_AXIS]
        samples = [_amplitudes_at(space, full, np.column_stack([r, rz[near, 1]]))[0]
                   for r in radii]
        x = rz[near, 0]
        weights = [np.prod([(x - radii[j]) / (radii[i] - radii[j])
                            for j in range(len(radii)) if j != i], axis=0)
                   for i in range(len(radii))]
        F[1, near] = sum(w * s[0][1] for w, s in zip(weights, samples))
        for k in (0, 2):
            curl[k, near] = sum(w * s[1][k] for w, s in zip(weights, samples))
        on_axis = near[x == 0]
        vanish = {0: [0, 1], 1: [2]}.get(space.m, [0, 1, 2])
        for field in (F, curl):
            field[np.ix_(vanish, on_axis)] = 0.0
    return F, curl, cells


def _cartesian(amplitude: np.ndarray, phi: np.ndarray) -> np.ndarray:
    """(r, φ, z) components at azimuth φ -> (n, 3) x, y, z."""
    a_r, a_p, a_z = amplitude
    return np.column_stack([a_r * np.cos(phi) - a_p * np.sin(phi),
                            a_r * np.sin(phi) + a_p * np.cos(phi), a_z])


def _azimuthal(space: OrderSpace, phi: np.ndarray):
    """The factors of the reported member: (cos mφ, sin mφ, cos mφ) for the carried field,
    (sin mφ, cos mφ, sin mφ) for its curl; 1 for m = 0."""
    if space.m == 0:
        one = np.ones_like(phi)
        return np.array([one, one, one]), np.array([one, one, one])
    c, s = np.cos(space.m * phi), np.sin(space.m * phi)
    return np.array([c, s, c]), np.array([s, c, s])


def fields_at_points(space: OrderSpace, dofs: np.ndarray, omega: float,
                     points: np.ndarray) -> PointFields:
    """E and H of one mode (``dofs`` over the free DOFs of ``space``) at ``points`` (n, 3)."""
    full = space.constraint.expand(dofs)
    rz = np.column_stack([np.hypot(points[:, 0], points[:, 1]), points[:, 2]])
    phi = np.arctan2(points[:, 1], points[:, 0])
    F, curl, cells = _near_axis(space, full, rz)
    section = space.model.section
    # eps_r(x, y, z) of a body of revolution is read on the plane y = 0 (as the solver does)
    eps, mu = materials_at(space.model.materials, section.region_names,
                           section.tri_region[cells],
                           np.column_stack([rz[:, 0], np.zeros(len(rz)), rz[:, 1]]))
    carried, rotated = _azimuthal(space, phi)
    scale = 1.0 / math.sqrt(_stored_energy(space))
    F_xyz = _cartesian(F * carried, phi) * scale
    curl_xyz = _cartesian(curl * rotated, phi) * scale
    if space.form == "E":
        E = F_xyz + 0j
        H = 1j * curl_xyz / (omega * mu_0 * mu[:, None])
    else:
        H = 1j * F_xyz
        E = curl_xyz / (omega * epsilon_0 * eps[:, None]) + 0j
    return PointFields(E=E, H=H, mu_r=mu)


def magnetic_filling(space: OrderSpace, dofs: np.ndarray, axis) -> MagneticFilling:
    """The shares of ∫|H|² dV (post.filling) of the reported member, the azimuthal
    integral taken by the trapezoidal rule on 2m + 4 angles (exact for the trigonometric
    polynomials of degree 2m + 2 that |H·a|² is in φ)."""
    axis = unit_axis(axis)
    full = space.constraint.expand(dofs)
    eb = space.edge_basis
    e = eb.interpolate(full[:space.n_edge])
    u = space.node_basis.interpolate(full[space.n_edge:])
    r = eb.mapping.F(eb.X)[0]
    f_t, e_curl = np.asarray(e), np.asarray(e.curl)
    meridional = (np.asarray(u.grad) + space.m * f_t) / r
    if space.form == "E":
        H = np.array([-meridional[1], -e_curl, meridional[0]]) / space.mu
    else:
        H = np.array([f_t[0], np.asarray(u) / r, f_t[1]])
    count = 2 * space.m + 4
    squared = np.zeros(r.shape)
    along = np.zeros(r.shape)
    for phi in 2 * math.pi * np.arange(count) / count:
        carried, rotated = _azimuthal(space, np.array([phi]))
        factors = rotated[:, 0] if space.form == "E" else carried[:, 0]
        h_r, h_p, h_z = H * factors[:, None, None]
        h = np.array([h_r * math.cos(phi) - h_p * math.sin(phi),
                      h_r * math.sin(phi) + h_p * math.cos(phi), h_z])
        squared += np.sum(np.abs(h) ** 2, axis=0)     # |·|²: a periodic cell's modes are
        along += np.abs(np.einsum("i,ijk->jk", np.asarray(axis), h)) ** 2   # complex
    weight = r * eb.dx
    section = space.model.section
    return region_shares(np.sum(squared * weight, axis=1), np.sum(along * weight, axis=1),
                         section.tri_region, section.region_names, axis)
