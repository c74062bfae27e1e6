"""The discrete gradient against scikit-fem's assembly of the same fields.

For Nédélec elements of order k the gradient of every Lagrange function of order k lies in
the edge space, so M G must equal the mixed matrix B_ij = ∫ N_i · ∇φ_j exactly, and K G must
vanish (Nédélec 1980; common practice in edge-element codes)."""

import numpy as np
import pytest
from skfem import Basis, BilinearForm, MeshTet, asm
from skfem.helpers import dot, grad

from femcav.fem.gradient import discrete_gradient
from femcav.geometry.mesh import TaggedMesh
from femcav.materials import Material
from femcav.model import Model
from femcav.fem.space import build_space


def skewed_model():
    mesh = MeshTet.init_tensor(np.linspace(0, 1, 4), np.linspace(0, 0.5, 3), np.linspace(0, 2, 5))
    points = (mesh.p + 0.05 * np.sin(3 * mesh.p[::-1])).T   # skew the elements
    tm = TaggedMesh(points=points, tets=mesh.t.T, tet_region=np.ones(mesh.t.shape[1], int),
                    region_names={"inside": 1}, faces=np.zeros((0, 3), int),
                    face_tag=np.zeros(0, int), wall_names={})
    return Model(mesh=tm, materials={"inside": Material()})


@pytest.mark.parametrize("order", [1, 2, 3])
def test_gradient_is_exact(order):
    space = build_space(skewed_model(), "E", order)
    M = asm(BilinearForm(lambda u, v, w: dot(u, v)), space.basis)
    K = asm(BilinearForm(lambda u, v, w: dot(u.curl, v.curl)), space.basis)
    scalar = Basis(space.mesh, space.scalar_basis.elem, quadrature=space.basis.quadrature)
    B = asm(BilinearForm(lambda u, v, w: dot(grad(u), v)), scalar, space.basis)
    G = discrete_gradient(space)
    assert abs(M @ G - B).max() < 1e-12 * abs(B).max()
    assert abs(K @ G).max() < 1e-10 * abs(K).max()
