"""Resonances of an empty spherical cavity with a perfectly conducting wall.

For degree n >= 1 the TE modes have k R = the zeros of the spherical Bessel function j_n(x),
the TM modes those of (x j_n(x))' (R. F. Harrington, Time-Harmonic Electromagnetic Fields,
1961, §6-11; from memory). Each degree holds 2n + 1 azimuthal orders m = -n..n at one
frequency, so a body-of-revolution solve at order m sees every degree n >= max(m, 1) once.
Roots from scipy.special.spherical_jn with brentq.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import c as C0
from scipy.optimize import brentq
from scipy.special import spherical_jn


def spherical_cavity_roots(n: int, count: int) -> list[float]:
    """k R of the lowest ``count`` TE and the lowest ``count`` TM modes of degree n, sorted
    together (2 count values)."""

    def te(x):
        return spherical_jn(n, x)

    def tm(x):
        return spherical_jn(n, x) + x * spherical_jn(n, x, derivative=True)
    out = []
    grid = np.linspace(0.5, 20 + 4 * count, 4000 + 800 * count)
    for f in (te, tm):
        values = f(grid)
        roots = [brentq(f, a, b, xtol=1e-15) for a, b, va, vb
                 in zip(grid[:-1], grid[1:], values[:-1], values[1:]) if va * vb < 0]
        out += roots[:count]
    return sorted(out)


def sphere_order_frequencies(radius: float, m: int, count: int) -> list[float]:
    """The lowest ``count`` frequencies (Hz) a solve at azimuthal order m must find, each once:
    every degree n >= max(m, 1), TE and TM."""
    roots, n = [], max(m, 1)
    while True:
        degree = spherical_cavity_roots(n, count)
        # the lowest root grows with the degree: once it passes the count-th root found so
        # far, no higher degree can enter
        if len(roots) >= count and degree[0] > roots[count - 1]:
            break
        roots = sorted(roots + degree)
        n += 1
    return [C0 * x / (2 * math.pi * radius) for x in roots[:count]]
