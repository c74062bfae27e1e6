"""Naming outer surfaces of boxes and cylinders from points on them."""

from __future__ import annotations

import numpy as np


def box_face_namer(size: tuple[float, float, float], tol: float):
    """x_min ... z_max for the faces of the box 0..size; "" for other surfaces."""
    def name(points: np.ndarray) -> str:
        for i, axis in enumerate("xyz"):
            if np.all(np.abs(points[:, i]) <= tol):
                return f"{axis}_min"
            if np.all(np.abs(points[:, i] - size[i]) <= tol):
                return f"{axis}_max"
        return ""
    return name


def cylinder_face_namer(length: float, tol: float, side: str = "side"):
    """bottom (z = 0), top (z = length), and ``side`` for everything else outside."""
    def name(points: np.ndarray) -> str:
        if np.all(np.abs(points[:, 2]) <= tol):
            return "bottom"
        if np.all(np.abs(points[:, 2] - length) <= tol):
            return "top"
        return side
    return name
