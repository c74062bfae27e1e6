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


def assemble(space: EdgeSpace):
    """(K, M) over all edges, as CSR matrices; restrict with ``space.free``."""
    K = asm(_curl_curl, space.basis, a=space.stiffness_coef).tocsr()
    M = asm(_mass, space.basis, b=space.mass_coef).tocsr()
    return K, M


def restrict(A, free):
    return A[free][:, free].tocsr()
