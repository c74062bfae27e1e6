"""Stiffness and mass matrices of the curl-curl eigenproblem K x = k0² M x."""

from __future__ import annotations

from skfem import BilinearForm, asm
from skfem.helpers import curl, dot

from .space import EdgeSpace


@BilinearForm
def _curl_curl(u, v, w):
    return w.a * dot(curl(u), curl(v))


@BilinearForm
def _mass(u, v, w):
    return w.b * dot(u, v)


def assemble_stiffness(space: EdgeSpace, coefficient):
    """∫ a curl u · curl v over all edges, a given at the quadrature points."""
    return asm(_curl_curl, space.basis, a=coefficient).tocsr()


def assemble_mass(space: EdgeSpace, coefficient):
    """∫ b u · v over all edges, b given at the quadrature points."""
    return asm(_mass, space.basis, b=coefficient).tocsr()


def assemble(space: EdgeSpace):
    """(K, M) over all edges, as CSR matrices; restrict with ``space.free``."""
    return assemble_stiffness(space, space.stiffness_coef), assemble_mass(space, space.mass_coef)


def restrict(A, free):
    return A[free][:, free].tocsr()
