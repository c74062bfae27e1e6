"""A solid of revolution about the z axis, given by its meridional profile.

The profile is a chain of straight segments and elliptic arcs (axes along r and z) in the
half-plane (r, z), r >= 0, that starts and ends on the axis; the axis closes it. In 3D the
face it bounds (in the plane y = 0, x = r) is revolved a full turn about z; the meridional
section (parts of ``section.py``) uses the same face in the plane z = 0 (x = r, y = z), so a
part made of such solids has both a 3D mesh and an axisymmetric one with the same walls.

Each arc spans less than a half turn (gmsh's OpenCASCADE arcs must), and consecutive
segments share their end point exactly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Segment:
    """A straight segment from ``start`` to ``end``, both (r, z) in metres."""

    start: tuple[float, float]
    end: tuple[float, float]

    def sample(self, n: int) -> np.ndarray:
        t = np.linspace(0.0, 1.0, n)[:, None]
        return (1 - t) * np.asarray(self.start) + t * np.asarray(self.end)

    def distance(self, rz: np.ndarray) -> np.ndarray:
        a, b = np.asarray(self.start), np.asarray(self.end)
        d = b - a
        t = np.clip((rz - a) @ d / float(d @ d), 0.0, 1.0)
        return np.linalg.norm(rz - (a + t[:, None] * d), axis=1)


@dataclass(frozen=True)
class EllipticArc:
    """Points (r_c + semi_r sin t, z_c + semi_z cos t) for t from ``t_start`` to ``t_end``
    (either way round, less than π apart)."""

    centre: tuple[float, float]
    semi_r: float
    semi_z: float
    t_start: float
    t_end: float

    def at(self, t) -> np.ndarray:
        t = np.asarray(t, float)
        return np.stack([self.centre[0] + self.semi_r * np.sin(t),
                         self.centre[1] + self.semi_z * np.cos(t)], axis=-1)

    @property
    def start(self) -> tuple[float, float]:
        return tuple(self.at(self.t_start).tolist())

    @property
    def end(self) -> tuple[float, float]:
        return tuple(self.at(self.t_end).tolist())

    def sample(self, n: int) -> np.ndarray:
        return self.at(np.linspace(self.t_start, self.t_end, n))

    def distance(self, rz: np.ndarray) -> np.ndarray:
        """Distance to the arc: to first order |F| / |∇F| of the ellipse's implicit form
        near it (what naming and morphing need: tolerances far below the curvature
        radius), the nearer end point off the arc's angular range."""
        u = (rz[:, 0] - self.centre[0]) / self.semi_r
        v = (rz[:, 1] - self.centre[1]) / self.semi_z
        implicit = u**2 + v**2 - 1
        gradient = 2 * np.hypot(u / self.semi_r, v / self.semi_z)
        near = np.abs(implicit) / np.maximum(gradient, 1e-300)
        t = np.arctan2(u, v)
        lo, hi = sorted((self.t_start, self.t_end))
        within = (_wrap(t - lo) <= _wrap(hi - lo))
        ends = np.minimum(np.linalg.norm(rz - np.asarray(self.start), axis=1),
                          np.linalg.norm(rz - np.asarray(self.end), axis=1))
        return np.where(within, near, ends)


def _wrap(angle):
    return np.mod(angle, 2 * math.pi)


Piece = Segment | EllipticArc


@dataclass(frozen=True)
class RevolvedProfile:
    """The solid swept by the region between ``pieces`` (from the axis back to the axis) and
    the z axis."""

    pieces: tuple[Piece, ...]

    def outline(self, per_piece: int = 64) -> np.ndarray:
        """The closed polygon (n, 2) through points of every piece, in (r, z)."""
        return np.concatenate([p.sample(per_piece)[:-1] for p in self.pieces]
                              + [np.asarray([self.pieces[-1].end])])

    # --- gmsh -------------------------------------------------------------------------------
    def _face(self, occ, to_xyz) -> int:
        """The profile's plane face; ``to_xyz`` places (r, z) in space."""
        tags: dict[tuple[float, float], int] = {}
        helpers = []        # centres and major-axis points: no vertex of the face

        def point(rz) -> int:
            key = (round(rz[0], 15), round(rz[1], 15))
            if key not in tags:
                tags[key] = occ.addPoint(*to_xyz(*key))
            return tags[key]

        curves = []
        for piece in self.pieces:
            a, b = point(piece.start), point(piece.end)
            if isinstance(piece, Segment):
                curves.append(occ.addLine(a, b))
                continue
            centre = occ.addPoint(*to_xyz(*piece.centre))
            helpers.append(centre)
            if math.isclose(piece.semi_r, piece.semi_z, rel_tol=1e-12):
                curves.append(occ.addCircleArc(a, centre, b))
                continue
            # OpenCASCADE takes the major axis from a point on it
            major = ((piece.centre[0] + piece.semi_r, piece.centre[1])
                     if piece.semi_r > piece.semi_z
                     else (piece.centre[0], piece.centre[1] + piece.semi_z))
            helpers.append(occ.addPoint(*to_xyz(*major)))
            curves.append(occ.addEllipseArc(a, centre, helpers[-1], b))
        first, last = self.pieces[0].start, self.pieces[-1].end
        curves.append(occ.addLine(point(last), point(first)))      # along the axis
        face = occ.addPlaneSurface([occ.addCurveLoop(curves)])
        occ.remove([(0, t) for t in helpers])
        return face

    def add_to(self, occ) -> int:
        """The 3D solid (a full turn of the face about z); returns its volume tag."""
        face = self._face(occ, lambda r, z: (r, 0.0, z))
        out = occ.revolve([(2, face)], 0, 0, 0, 0, 0, 1, 2 * math.pi)
        return next(t for d, t in out if d == 3)

    def add_section(self, occ) -> int:
        """The meridional face in the plane z = 0 (x = r, y = z); returns its surface tag."""
        return self._face(occ, lambda r, z: (r, z, 0.0))

    # --- geometry tests ---------------------------------------------------------------------
    def volume(self) -> float:
        """2π ∫ r dA = π |∮ r² dz| (Green's theorem), on a fine polygon of the profile."""
        polygon = self.outline(2049)
        r, z = polygon[:, 0], polygon[:, 1]
        r1, z1 = np.roll(r, -1), np.roll(z, -1)
        # exact for each chord: ∫ r² dz along a straight piece
        return math.pi * abs(float(np.sum((r**2 + r * r1 + r1**2) / 3 * (z1 - z))))

    def _rz(self, p: np.ndarray) -> np.ndarray:
        return np.column_stack([np.hypot(p[:, 0], p[:, 1]), p[:, 2]])

    def contains(self, p: np.ndarray) -> np.ndarray:
        """Inside or on the solid, by the even-odd rule on a ray in +r from each point (the
        points sorted by z, so that each edge of the outline meets only those at its
        heights)."""
        rz = self._rz(np.asarray(p, float))
        order = np.argsort(rz[:, 1], kind="stable")
        r, z = rz[order, 0], rz[order, 1]
        crossings = np.zeros(len(r), dtype=np.int64)
        polygon = self.outline()
        for a, b in zip(polygon, np.roll(polygon, -1, axis=0)):
            lo, hi = sorted((a[1], b[1]))
            i0, i1 = np.searchsorted(z, [lo, hi], side="left")
            if i1 > i0:
                r_cross = a[0] + (z[i0:i1] - a[1]) * (b[0] - a[0]) / (b[1] - a[1])
                crossings[i0:i1] += r[i0:i1] < r_cross
        inside = np.empty(len(r), dtype=bool)
        inside[order] = crossings % 2 == 1
        return inside | (self.distance(rz) <= 1e-12)

    def distance(self, rz: np.ndarray) -> np.ndarray:
        """Distance (m) from points (r, z) to the profile, the axis left out."""
        return np.min([piece.distance(rz) for piece in self.pieces], axis=0)

    def on_surface(self, p: np.ndarray, tol: float) -> np.ndarray:
        return self.distance(self._rz(np.asarray(p, float))) <= tol

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        polygon = self.outline()
        radius = float(polygon[:, 0].max())
        return (np.array([-radius, -radius, polygon[:, 1].min()]),
                np.array([radius, radius, polygon[:, 1].max()]))
