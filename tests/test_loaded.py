"""Inhomogeneously filled boxes against independent 1D references: a dielectric slab (a
transcendental equation, solved with brentq) and a permittivity graded along x (a
Sturm-Liouville problem, solved by shooting with solve_ivp). Modes are picked by their field
(E almost entirely along y), not by sort order."""

import math

import numpy as np

from femcav.analytic.graded import graded_te_m0p_frequencies
from femcav.analytic.slab import slab_te_m0p_frequencies
from femcav.expressions import Expression
from femcav.geometry import build_part, read_mesh
from femcav.materials import Material
from femcav.model import make_model
from femcav.post.fields import mode_fields
from femcav.solver import solve_model
from conftest import box_with_blocks

A, B, D = 0.02286, 0.01016, 0.030


def y_polarised(result, threshold=0.99):
    """Frequencies of the modes whose electric energy is (almost) all in E_y."""
    volumes = result.space.model.mesh.tet_volumes()
    out = []
    for mode in result.modes:
        E = mode_fields(result.space, mode.dofs, 2 * math.pi * mode.frequency_hz).E
        share = np.sum(volumes * E[:, 1] ** 2) / np.sum(volumes * np.sum(E**2, axis=1))
        if share > threshold:
            out.append(mode.frequency_hz)
    return np.array(out)


def lowest_family(frequencies_by_p, count):
    return np.sort(np.concatenate(frequencies_by_p))[:count]


def test_slab_loaded_box(tmp_path):
    thickness, eps = 0.006, 4.0
    mesh = read_mesh(box_with_blocks(tmp_path / "slab.msh", (A, B, D),
                                     {"slab": (0, 0, 0, thickness, B, D)}, mesh_size=0.0015))
    model = make_model(mesh, {"air": Material(), "slab": Material(eps_r=eps)}, {})
    computed = y_polarised(solve_model(model, modes=4))
    reference = lowest_family([slab_te_m0p_frequencies(A, thickness, D, eps, p, 2)
                               for p in (1, 2, 3)], len(computed))
    assert len(computed) >= 2
    np.testing.assert_allclose(computed, reference, rtol=3e-3)


def test_graded_permittivity_box():
    profile = "1.5 + sin(pi*x/0.02286)"
    mesh = build_part("box", width=A, height=B, length=D, mesh_size=0.0015)
    model = make_model(mesh, {"inside": Material(eps_r=Expression(profile))}, {})
    computed = y_polarised(solve_model(model, modes=4))
    eps = lambda x: 1.5 + math.sin(math.pi * x / A)
    reference = lowest_family([graded_te_m0p_frequencies(eps, A, D, p, 2, 1.5, 2.5)
                               for p in (1, 2, 3)], len(computed))
    assert len(computed) >= 3
    np.testing.assert_allclose(computed, reference, rtol=2e-3)


def test_python_callable_permittivity_equals_expression():
    mesh = build_part("box", width=A, height=B, length=D, mesh_size=0.004)
    text = "1.5 + sin(pi*x/0.02286)"
    by_text = solve_model(make_model(mesh, {"inside": Material(eps_r=Expression(text))}, {}),
                          modes=3)
    by_callable = solve_model(make_model(
        mesh, {"inside": Material(eps_r=lambda x, y, z: 1.5 + np.sin(np.pi * x / A))}, {}),
        modes=3)
    np.testing.assert_allclose([m.frequency_hz for m in by_callable.modes],
                               [m.frequency_hz for m in by_text.modes], rtol=1e-10)
