"""E and H of a 3D mode at given points, as complex vectors for 1 J stored in the whole part.

The phase is fixed so that E is real: with time dependence e^{jωt}, ∇×E = -jωμH gives
H = j ∇×E / (ω μ0 μ_r) in the E form, and in the H form E = ∇×H / (jω ε0 ε_r) is made real by
carrying j H. The scale is that of post.fields (xᵀ M x = 1 stores 1 J in the meshed part),
divided by sqrt(2^cuts) when symmetry planes cut the part, so that the whole part stores 1 J.
A point on the cut-away side of a symmetry plane is reflected onto the kept side and its
field mirrored with the parity of the mode's class: across a PMC plane E(Rx) = R E(x) and
H(Rx) = -R H(x), across a PEC plane both signs flip (E is a polar vector, H an axial one;
common practice).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.constants import epsilon_0, mu_0

from ..errors import InputError
from ..fem.space import EdgeSpace
from ..fem.point_location import locate, reference_coordinates

AXES = "xyz"


@dataclass(frozen=True)
class PointFields:
    """Complex field vectors at n points, for 1 J stored in the whole part."""

    E: np.ndarray      # (n, 3) complex, V/m
    H: np.ndarray      # (n, 3) complex, A/m
    mu_r: np.ndarray   # (n,) relative permeability where each point lies


@dataclass(frozen=True)
class Mirror:
    """Symmetry planes that cut the meshed part: axis -> position of the plane (m); the kept
    side is at or above each plane."""

    planes: dict[str, float]

    def fold(self, points: np.ndarray) -> np.ndarray:
        """``points`` (n, 3) reflected onto the kept side."""
        folded = points.copy()
        for axis, at in self.planes.items():
            i = AXES.index(axis)
            below = folded[:, i] < at
            folded[below, i] = 2 * at - folded[below, i]
        return folded

    def signs(self, points: np.ndarray, label: str | None) -> tuple[np.ndarray, np.ndarray]:
        """Per point and component, the factors that carry E and H from the folded point
        back to the point itself, for a mode of the class ``label`` ("x:PMC y:PEC")."""
        kinds = dict(part.split(":") for part in (label or "").split())
        e = np.ones((points.shape[0], 3))
        h = np.ones((points.shape[0], 3))
        for axis, at in self.planes.items():
            i = AXES.index(axis)
            below = points[:, i] < at
            parity = 1.0 if kinds.get(axis, "PMC") == "PMC" else -1.0
            reflect = np.ones(3)
            reflect[i] = -1.0
            e[below] *= parity * reflect
            h[below] *= -parity * reflect
        return e, h


NO_MIRROR = Mirror({})

# How far outside its nearest element a probe point may lie, as a barycentric coordinate:
# flat facets cut inside a curved wall by about h / (8 R) of an element (h the element
# size, R the wall's radius), so a point on the true wall must pass; the field there is
# the element's own polynomial continued.
OUTSIDE_SLACK = 0.1


def points_outside(mesh_points: np.ndarray, tets: np.ndarray, points: np.ndarray,
                   slack: float = OUTSIDE_SLACK) -> np.ndarray:
    """Which of ``points`` (n, 3) lie outside the tetrahedral mesh (corner coordinates
    ``mesh_points``, elements ``tets`` (n_tets, 4)) by more than ``slack``."""
    class Corners:   # what locate reads of a mesh
        p = np.ascontiguousarray(mesh_points.T)
        t = np.ascontiguousarray(tets.T)
    where = locate(Corners, np.ascontiguousarray(points.T))
    return where.min_barycentric < -slack


def fields_at_points(space: EdgeSpace, dofs: np.ndarray, omega: float, points: np.ndarray,
                     *, mirror: Mirror = NO_MIRROR, label: str | None = None,
                     cuts: int = 0) -> PointFields:
    """E and H of one mode (``dofs`` over all edges, M-normalised) at ``points`` (n, 3)."""
    folded = mirror.fold(points)
    basis = space.basis
    where = locate(space.mesh, np.ascontiguousarray(folded.T))
    reference = reference_coordinates(basis.mapping, np.ascontiguousarray(folded.T), where)
    value = np.zeros((3, folded.shape[0]), dtype=np.result_type(dofs, float))
    curl = np.zeros_like(value)
    for i in range(basis.Nbfun):
        local = basis.elem.gbasis(basis.mapping, reference, i, tind=where.cells)[0]
        weight = dofs[basis.element_dofs[i, where.cells]]
        value += np.asarray(local)[:, :, 0] * weight
        curl += np.asarray(local.curl)[:, :, 0] * weight
    mesh = space.model.mesh
    eps, mu = materials_at(space.model.materials, mesh.region_names,
                           mesh.tet_region[where.cells], folded)
    scale = 1.0 / np.sqrt(2.0 ** cuts)
    if space.form == "E":
        E = value.T * np.sqrt(2.0 / epsilon_0) * scale + 0j
        H = 1j * curl.T * np.sqrt(2.0 / epsilon_0) * scale / (omega * mu_0 * mu[:, None])
    else:
        H = 1j * value.T * np.sqrt(2.0 / mu_0) * scale
        E = curl.T * np.sqrt(2.0 / mu_0) * scale / (omega * epsilon_0 * eps[:, None]) + 0j
    e_sign, h_sign = mirror.signs(points, label)
    return PointFields(E=E * e_sign, H=H * h_sign, mu_r=mu)


def materials_at(materials: dict, region_names: dict[str, int], region_of_cell: np.ndarray,
                 points: np.ndarray):
    """eps_r (at each point itself, (n, 3)) and mu_r of the region each point lies in
    (``region_of_cell``: the region id of each point's element)."""
    eps, mu = np.empty(len(points)), np.empty(len(points))
    for name, region_id in region_names.items():
        rows = region_of_cell == region_id
        if rows.any():
            materials[name].require_isotropic(name)
            eps[rows] = materials[name].eps_at(points[rows, 0], points[rows, 1], points[rows, 2])
            mu[rows] = materials[name].mu_r
    return eps, mu


def refuse_outside(outside: np.ndarray, points: np.ndarray, field: str) -> None:
    """InputError naming ``field`` and the first point that lies outside the part."""
    if outside.any():
        k = int(np.flatnonzero(outside)[0])
        where = ", ".join(f"{v * 1e3:.6g}" for v in points[k])
        count = int(outside.sum())
        raise InputError(f"{'point' if count == 1 else f'{count} points, the first'} "
                         f"({where}) mm lies outside the part", field=field)
