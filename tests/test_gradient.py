"""The discrete gradient against scikit-fem's own P1 basis (an outside library).

For lowest-order Nédélec elements the gradient of every P1 function lies in the edge space,
so M G must equal the mixed matrix B_ij = ∫ N_i · ∇φ_j exactly, and K G must vanish."""

import numpy as np
from skfem import Basis, BilinearForm, ElementTetN1, ElementTetP1, MeshTet, asm
from skfem.helpers import dot, grad

from femcav.fem.gradient import discrete_gradient


def test_gradient_is_exact_for_p1():
    mesh = MeshTet.init_tensor(np.linspace(0, 1, 4), np.linspace(0, 0.5, 3), np.linspace(0, 2, 5))
    mesh = MeshTet(mesh.p + 0.05 * np.sin(3 * mesh.p[::-1]), mesh.t)  # skew the elements
    edge, node = Basis(mesh, ElementTetN1()), Basis(mesh, ElementTetP1())

    M = asm(BilinearForm(lambda u, v, w: dot(u, v)), edge)
    K = asm(BilinearForm(lambda u, v, w: dot(u.curl, v.curl)), edge)
    B = asm(BilinearForm(lambda u, v, w: dot(grad(u), v)), node, edge)
    G = discrete_gradient(mesh)

    assert abs(M @ G - B).max() < 1e-14 * abs(B).max()
    assert abs(K @ G).max() < 1e-12 * abs(K).max()
