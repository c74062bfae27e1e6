"""A mode's field and curl at the quadrature points (femcav.fem.quadrature_fields) against
scikit-fem's own interpolation on the same basis (a general-purpose library as reference),
on a skewed flat mesh and on curved quadratic tetrahedra, orders 1 to 3, both forms."""

import numpy as np
import pytest

from femcav.fem.quadrature_fields import fields_at_quadrature
from femcav.fem.space import build_space
from test_assembly import curved_model, skewed_model


@pytest.mark.parametrize("make, order", [(skewed_model, 1), (skewed_model, 2),
                                         (skewed_model, 3), (curved_model, 2)])
@pytest.mark.parametrize("form", ["E", "H"])
def test_fields_equal_scikit_fem_interpolation(make, order, form):
    # Measured: within 3e-15 of the largest value (round-off of two sums in another order).
    space = build_space(make(), form, order)
    dofs = np.random.default_rng(order).standard_normal(space.dofs.N)
    ours = fields_at_quadrature(space, dofs)
    reference = space.basis.interpolate(dofs)
    for mine, theirs in ((ours.value, np.asarray(reference)), (ours.curl, reference.curl),
                         (ours.dx, space.basis.dx)):
        assert mine.shape == theirs.shape
        assert np.abs(mine - theirs).max() <= 1e-13 * np.abs(theirs).max()


def test_complex_vectors_keep_their_imaginary_part():
    # the field is linear in the DOFs: F(a + jb) = F(a) + j F(b)
    space = build_space(skewed_model(), "E", 2)
    rng = np.random.default_rng(5)
    a, b = rng.standard_normal((2, space.dofs.N))
    whole = fields_at_quadrature(space, a + 1j * b)
    parts = fields_at_quadrature(space, a), fields_at_quadrature(space, b)
    np.testing.assert_allclose(whole.curl, parts[0].curl + 1j * parts[1].curl, atol=1e-12)
    np.testing.assert_allclose(whole.value, parts[0].value + 1j * parts[1].value, atol=1e-12)
