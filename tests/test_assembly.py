"""The stiffness and mass matrices against scikit-fem's own assembly of the same forms (a
general-purpose library as reference), and the tangential continuity of the edge elements
across every interior face, on skewed and on curved meshes with two materials."""

import functools

import numpy as np
import pytest
from skfem import BilinearForm, InteriorFacetBasis, MeshTet, asm
from skfem.helpers import dot

from femcav.fem.assembly import assemble
from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.geometry.mesh import TaggedMesh
from femcav.materials import Material
from femcav.model import Model

MATERIALS = {"low": Material(eps_r=lambda x, y, z: 2.0 + x * y, mu_r=1.5),
             "high": Material(eps_r=6.0, mu_r=3.0)}


def skewed_model():
    """A brick mesh with its points moved off the grid, split in two regions along x."""
    mesh = MeshTet.init_tensor(np.linspace(0, 1, 4), np.linspace(0, 0.5, 3), np.linspace(0, 2, 5))
    points = (mesh.p + 0.05 * np.sin(3 * mesh.p[::-1])).T
    centre_x = points[mesh.t.T].mean(axis=1)[:, 0]
    tm = TaggedMesh(points=points, tets=mesh.t.T, tet_region=np.where(centre_x < 0.5, 1, 2),
                    region_names={"low": 1, "high": 2}, faces=np.zeros((0, 3), int),
                    face_tag=np.zeros(0, int), wall_names={})
    return Model(mesh=tm, materials=MATERIALS)


@functools.cache
def curved_model():
    """Quadratic tetrahedra of a dielectric-resonator fixture: a puck on a support."""
    mesh = build_part("dr_fixture", shield_radius=0.01, shield_height=0.01, puck_radius=0.004,
                      puck_height=0.003, support_height=0.002, mesh_size=0.005, curved=True)
    assert mesh.tets10 is not None
    return Model(mesh=mesh, materials={"air": Material(), "puck": MATERIALS["high"],
                                       "support": MATERIALS["low"]})


@pytest.mark.parametrize("make, order", [(skewed_model, 1), (skewed_model, 2),
                                         (skewed_model, 3), (curved_model, 2)])
@pytest.mark.parametrize("form", ["E", "H"])
def test_matrices_equal_scikit_fem_assembly(make, order, form):
    # The same integrands, a dot(curl, curl) and b dot(u, v), with the space's coefficients at
    # its quadrature points, summed by scikit-fem; femcav's are over the free DOFs only.
    # Measured: within 2.6e-15 of the largest entry.
    space = build_space(make(), form, order)
    a, b = space.stiffness_coef, space.mass_coef
    K_ref = asm(BilinearForm(lambda u, v, w: w.a * dot(u.curl, v.curl)), space.basis, a=a)
    M_ref = asm(BilinearForm(lambda u, v, w: w.b * dot(u, v)), space.basis, b=b)
    K, M = assemble(space)
    # the DOFs left after the essential walls (named `constraint.kept` where the space
    # carries a constraint operator)
    free = space.constraint.kept if hasattr(space, "constraint") else space.free
    for ours, ref in ((K, K_ref), (M, M_ref)):
        ref = ref.tocsr()[free][:, free]
        assert abs(ours - ref).max() <= 5e-15 * abs(ref).max(), abs(ours - ref).max()


@pytest.mark.parametrize("order", [1, 2, 3])
def test_tangential_component_is_continuous_across_every_interior_face(order):
    # A random field of the space, evaluated on each interior face from the element on either
    # side: the tangential part must agree, the normal part in general does not (H(curl)
    # conformity, Nédélec 1980; common practice). (Flat elements only: scikit-fem's facet
    # basis cannot map the far side of a curved face.)
    space = build_space(skewed_model(), "E", order)
    dofs = np.random.default_rng(5).standard_normal(space.basis.N)
    sides = [InteriorFacetBasis(space.mesh, space.element, dofs=space.dofs, side=s,
                                intorder=2 * order) for s in (0, 1)]
    values = [np.asarray(side.interpolate(dofs)) for side in sides]
    n = np.asarray(sides[0].normals)

    def tangential(u):
        return u - np.sum(u * n, axis=0) * n
    jump_t = np.abs(tangential(values[0]) - tangential(values[1])).max()
    jump_n = np.abs(np.sum((values[0] - values[1]) * n, axis=0)).max()
    scale = np.abs(values[0]).max()
    assert jump_t < 1e-10 * scale, jump_t / scale
    assert jump_n > 1e-3 * scale          # the check above is not vacuous


@pytest.mark.parametrize("form", ["E", "H"])
def test_lossy_coefficients_assemble_like_scikit_fem(form):
    # A lossy material has complex coefficients (ε_r (1 - j tan δ); common practice): they
    # are summed apart from the real path, and the two single-matrix assemblers serve the
    # lossy solves. Each against scikit-fem's complex assembly of the same integrand.
    import dataclasses

    from femcav.fem.assembly import assemble_mass, assemble_stiffness

    space = build_space(skewed_model(), form, 2)
    x = space.mesh.mapping().F(space.quadrature[0])[0]           # x at the quadrature points
    a = space.stiffness_coef * (1 - 0.2j * x)
    b = space.mass_coef * (1 - 0.05j - 0.1j * x * x)
    lossy = dataclasses.replace(space, stiffness_coef=a, mass_coef=b)
    K_ref = asm(BilinearForm(lambda u, v, w: w.a * dot(u.curl, v.curl), dtype=complex),
                space.basis, a=a)
    M_ref = asm(BilinearForm(lambda u, v, w: w.b * dot(u, v), dtype=complex), space.basis, b=b)
    free = space.constraint.kept
    K, M = assemble(lossy)
    for ours, ref in ((K, K_ref), (M, M_ref), (assemble_stiffness(lossy, a), K_ref),
                      (assemble_mass(lossy, b), M_ref)):
        ref = ref.tocsr()[free][:, free]
        assert np.iscomplexobj(ours.data) and abs(ref.imag).max() > 1e-3 * abs(ref).max()
        assert abs(ours - ref).max() <= 5e-15 * abs(ref).max(), abs(ours - ref).max()
