"""Solid primitives with the geometric tests that name regions and walls after meshing.

Boolean operations renumber every surface, so we do not track surfaces through them; instead
each surface is named afterwards by where its points lie: on the surface of which primitive.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Box:
    corner: tuple[float, float, float]
    size: tuple[float, float, float]

    def add_to(self, occ) -> int:
        return occ.addBox(*self.corner, *self.size)

    def volume(self) -> float:
        return float(np.prod(self.size))

    def contains(self, p: np.ndarray) -> np.ndarray:
        lo, hi = self.bounds()
        return np.all((p >= lo) & (p <= hi), axis=1)

    def on_surface(self, p: np.ndarray, tol: float) -> np.ndarray:
        lo, hi = np.asarray(self.corner), np.asarray(self.corner) + np.asarray(self.size)
        inside = np.all((p >= lo - tol) & (p <= hi + tol), axis=1)
        near_face = np.min(np.minimum(np.abs(p - lo), np.abs(p - hi)), axis=1) <= tol
        return inside & near_face

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        lo = np.asarray(self.corner, float)
        return lo, lo + np.asarray(self.size, float)


@dataclass(frozen=True)
class Cylinder:
    base: tuple[float, float, float]   # centre of one end face
    axis: tuple[float, float, float]   # from that centre to the other end's centre
    radius: float

    def add_to(self, occ) -> int:
        return occ.addCylinder(*self.base, *self.axis, self.radius)

    def volume(self) -> float:
        return math.pi * self.radius**2 * float(np.linalg.norm(self.axis))

    def _local(self, p: np.ndarray):
        axis = np.asarray(self.axis, float)
        length = float(np.linalg.norm(axis))
        along = (p - np.asarray(self.base)) @ (axis / length)
        radial = np.linalg.norm((p - np.asarray(self.base)) - np.outer(along, axis / length), axis=1)
        return along, radial, length

    def contains(self, p: np.ndarray) -> np.ndarray:
        along, radial, length = self._local(p)
        return (along >= 0) & (along <= length) & (radial <= self.radius)

    def on_surface(self, p: np.ndarray, tol: float) -> np.ndarray:
        along, radial, length = self._local(p)
        within = (along >= -tol) & (along <= length + tol) & (radial <= self.radius + tol)
        on_side = np.abs(radial - self.radius) <= tol
        on_end = (np.abs(along) <= tol) | (np.abs(along - length) <= tol)
        return within & (on_side | on_end)

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        ends = np.array([self.base, np.add(self.base, self.axis)], float)
        return ends.min(axis=0) - self.radius, ends.max(axis=0) + self.radius


@dataclass(frozen=True)
class Sphere:
    centre: tuple[float, float, float]
    radius: float

    def add_to(self, occ) -> int:
        return occ.addSphere(*self.centre, self.radius)

    def volume(self) -> float:
        return 4 / 3 * math.pi * self.radius**3

    def contains(self, p: np.ndarray) -> np.ndarray:
        return np.linalg.norm(p - np.asarray(self.centre), axis=1) <= self.radius

    def on_surface(self, p: np.ndarray, tol: float) -> np.ndarray:
        return np.abs(np.linalg.norm(p - np.asarray(self.centre), axis=1) - self.radius) <= tol

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        c = np.asarray(self.centre, float)
        return c - self.radius, c + self.radius


Solid = Box | Cylinder | Sphere
