"""Constraint operators: the reduced operators are Pᴴ A P, whatever P is.

References: linear algebra only (a dense triple product computed by numpy); the essential
wall condition n×E = 0 on PEC walls (common practice) for what the 3D space keeps.
"""

import numpy as np
import pytest
import scipy.sparse as sp

from femcav.fem.assembly import assemble
from femcav.fem.constraints import Constraint
from femcav.fem.gradient import discrete_gradient, kernel_basis
from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model

RNG = np.random.default_rng(11)


def _random_symmetric(n):
    A = sp.random(n, n, density=0.3, random_state=1)
    return (A + A.T + n * sp.identity(n)).tocsr()


def test_selection_drops_rows_and_columns():
    A = _random_symmetric(8)
    c = Constraint.keeping(8, [5, 1, 3, 1])
    assert list(c.kept) == [1, 3, 5]
    dense = A.toarray()
    assert np.allclose(c.reduce(A).toarray(), c.P.T.toarray() @ dense @ c.P.toarray())
    x = RNG.standard_normal(3)
    full = c.expand(x)
    assert np.allclose(full[[1, 3, 5]], x) and np.allclose(np.delete(full, [1, 3, 5]), 0)
    assert np.allclose((c.restrict_rows(sp.identity(8)) @ c.P).toarray(), np.eye(3))   # R P = I


def test_phase_links_give_the_hermitian_triple_product():
    # DOF 4 follows DOF 0 with a phase e^{-jφ} (a periodic pair), DOF 5 is fixed
    n, phase = 6, np.exp(-1j * 2.0944)
    kept = [0, 1, 2, 3]
    links = sp.csr_matrix(([phase], ([4], [0])), shape=(n, len(kept)))
    c = Constraint(n, np.array(kept), links)
    A = _random_symmetric(n)
    P = c.P.toarray()
    assert P[4, 0] == pytest.approx(phase) and not P[5].any()
    reduced = c.reduce(A).toarray()
    assert np.allclose(reduced, P.conj().T @ A.toarray() @ P)
    assert np.allclose(reduced, reduced.conj().T)          # stays Hermitian
    x = RNG.standard_normal(4) + 1j * RNG.standard_normal(4)
    assert np.allclose(c.expand(x), P @ x)
    assert np.allclose(c.restrict_rows(sp.identity(n)) @ P, np.eye(4))


@pytest.fixture(scope="module")
def box_space():
    mesh = build_part("box", width=0.02, height=0.01, length=0.03, mesh_size=0.006)
    return build_space(make_model(mesh, {"inside": Material(eps_r=2.0)}, {}), "E", 2)


def test_assembly_with_dropped_dofs_equals_the_reduced_full_matrix(box_space):
    # the assembly's shortcut (entries of fixed DOFs dropped before summation) against the
    # triple product of the full matrices, assembled with nothing fixed
    K, M = assemble(box_space)
    everything = Constraint.keeping(box_space.constraint.n_full,
                                    np.arange(box_space.constraint.n_full))
    from dataclasses import replace
    K_full, M_full = assemble(replace(box_space, constraint=everything))
    assert abs(box_space.constraint.reduce(K_full) - K).max() < 1e-12 * abs(K).max()
    assert abs(box_space.constraint.reduce(M_full) - M).max() < 1e-12 * abs(M).max()


def test_kernel_basis_is_the_gradient_of_kept_potentials(box_space):
    # P (R G Q) = G Q: the gradient of a potential that vanishes on the PEC walls has no
    # tangential component there, so nothing of it is lost by the edge constraint
    G = discrete_gradient(box_space)
    Q = box_space.scalar_constraint.P
    reduced = kernel_basis(box_space)
    assert abs(box_space.constraint.P @ reduced - G @ Q).max() < 1e-12
