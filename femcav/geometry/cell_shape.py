"""The half-cell of an elliptical accelerating cell: two elliptic arcs joined by a straight
wall, and the wall angle that joins them.

In the meridional half-plane, with the iris plane at z = 0 and the equator plane at
z = half_length: the iris ellipse (semi-axes iris_semi_z along z, iris_semi_r along r) is
centred at (r, z) = (iris_radius + iris_semi_r, 0), so that its point nearest the axis is
the iris (iris_radius, 0); the equator ellipse (equator_semi_z, equator_semi_r) is centred at
(equator_radius - equator_semi_r, half_length), its top the equator. The profile runs from
the iris round the iris ellipse's side that faces the equator, along the wall line, and
over the equator ellipse to the equator. The wall line touches both ellipses and crosses
between them, the iris ellipse on its iris side, the equator ellipse on the other.

Wall angle α: the angle between the wall line and the radial direction, positive when the
wall leans towards the equator plane as r grows (a cell that widens outwards); negative
is a re-entrant cell. With the line's normal n = (cos α, -sin α) in (z, r), an ellipse of
semi-axes (a, b) centred at C touches the line n·x = c where c = n·C ± h(n),
h(n) = sqrt(a² n_z² + b² n_r²) (its support function); the wall line is therefore the
solution of

    n(α)·(C_equator - C_iris) = h_iris(n) + h_equator(n),

the larger of its two roots (the other internal tangent crosses the opposite way).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .params import require
from .profile import EllipticArc, Segment


@dataclass(frozen=True)
class HalfCell:
    equator_radius: float
    iris_radius: float
    half_length: float
    equator_semi_z: float
    equator_semi_r: float
    iris_semi_z: float
    iris_semi_r: float
    wall_angle: float        # radians (module docstring)
    iris_t: float            # where the wall leaves the iris ellipse (EllipticArc angle)
    equator_t: float         # where it meets the equator ellipse

    def pieces(self, z0: float, mirrored: bool = False) -> list:
        """Iris arc, wall line and equator arc of the half-cell whose iris plane is at z0,
        from the iris to the equator; ``mirrored``: the half-cell reflected in its equator
        plane (iris plane at z0 + 2 half_length), from the equator to its iris."""
        iris_centre_z = z0 + (2 * self.half_length if mirrored else 0.0)
        equator_z = z0 + self.half_length
        iris = EllipticArc((self.iris_radius + self.iris_semi_r, iris_centre_z),
                           self.iris_semi_r, self.iris_semi_z,
                           _mirror(-math.pi / 2, mirrored), _mirror(self.iris_t, mirrored))
        equator = EllipticArc((self.equator_radius - self.equator_semi_r, equator_z),
                              self.equator_semi_r, self.equator_semi_z,
                              _mirror(self.equator_t, mirrored), math.pi / 2)
        wall = Segment(iris.end, equator.start)
        if not mirrored:
            return [iris, wall, equator]
        return [_reverse(equator), _reverse(wall), _reverse(iris)]


def _mirror(t: float, mirrored: bool) -> float:
    """The EllipticArc angle of the point reflected in the ellipse's z = const axis:
    cos t changes sign, sin t stays (t -> π - t)."""
    return math.pi - t if mirrored else t


def _reverse(piece):
    if isinstance(piece, Segment):
        return Segment(piece.end, piece.start)
    return EllipticArc(piece.centre, piece.semi_r, piece.semi_z, piece.t_end, piece.t_start)


def _tangent_equation(L, dR, iris_semi, equator_semi):
    (a1, b1), (a2, b2) = iris_semi, equator_semi

    def f(alpha):
        c, s = math.cos(alpha), math.sin(alpha)
        return (L * c - dR * s - math.sqrt(a1**2 * c**2 + b1**2 * s**2)
                - math.sqrt(a2**2 * c**2 + b2**2 * s**2))
    return f


def half_cell(equator_radius: float, iris_radius: float, half_length: float,
              equator_semi_z: float, equator_semi_r: float, iris_semi_z: float,
              iris_semi_r: float, names: dict[str, str]) -> HalfCell:
    """The half-cell with its wall line; InputError naming the parameter (``names`` maps
    equator_radius, iris_radius, half_length, equator_semi_z, equator_semi_r, iris_semi_z,
    iris_semi_r to the case file's keys) when the numbers make no valid cell."""
    require(iris_radius < equator_radius, f"{names['iris_radius']} ({iris_radius:g} m) must be "
            f"smaller than {names['equator_radius']} ({equator_radius:g} m)",
            f"geometry.{names['iris_radius']}")
    dR = (equator_radius - equator_semi_r) - (iris_radius + iris_semi_r)
    f = _tangent_equation(half_length, dR, (iris_semi_z, iris_semi_r),
                          (equator_semi_z, equator_semi_r))
    edge = 1e-9
    grid = np.linspace(-math.pi / 2 + edge, math.pi / 2 - edge, 4001)
    values = np.array([f(a) for a in grid])
    down = np.flatnonzero((values[:-1] > 0) & (values[1:] <= 0))
    require(down.size > 0, f"the iris and equator ellipses overlap, so no straight wall can "
            f"join them: lengthen {names['half_length']} ({half_length:g} m) or shorten the "
            f"ellipses' semi-axes", f"geometry.{names['half_length']}")
    k = down[-1]
    from scipy.optimize import brentq   # on use: loading scipy.optimize costs every command ~0.1 s

    alpha = brentq(f, grid[k], grid[k + 1], xtol=1e-15)
    c, s = math.cos(alpha), math.sin(alpha)
    h_iris = math.hypot(iris_semi_z * c, iris_semi_r * s)
    h_equator = math.hypot(equator_semi_z * c, equator_semi_r * s)
    # EllipticArc angles: r = r_c + semi_r sin t, z = z_c + semi_z cos t
    iris_t = math.atan2(-iris_semi_r * s / h_iris, iris_semi_z * c / h_iris)
    equator_t = math.atan2(equator_semi_r * s / h_equator, -equator_semi_z * c / h_equator)
    if equator_t < 0:
        equator_t += 2 * math.pi
    cell = HalfCell(equator_radius, iris_radius, half_length, equator_semi_z, equator_semi_r,
                    iris_semi_z, iris_semi_r, alpha, iris_t, equator_t)
    iris_arc, wall, _ = cell.pieces(0.0)
    iris_reach = iris_semi_z if iris_t >= 0 else iris_arc.end[1]
    require(iris_reach < half_length, f"the iris ellipse reaches past the equator plane "
            f"({iris_reach:g} m from the iris plane, half-cell {half_length:g} m): shorten "
            f"{names['iris_semi_z']}", f"geometry.{names['iris_semi_z']}")
    equator_reach = equator_semi_z if equator_t >= math.pi else half_length - wall.end[1]
    require(equator_reach < half_length, f"the equator ellipse reaches past the iris plane "
            f"({equator_reach:g} m from the equator plane, half-cell {half_length:g} m): "
            f"shorten {names['equator_semi_z']}", f"geometry.{names['equator_semi_z']}")
    return cell
