"""Tests written for mutants that survived `benchmarks/mutation.py` (see
benchmarks/mutation_survivors.md): each pins a behaviour that a small change to the code left
unnoticed by the rest of the suite. All are fast (no mesh larger than a few hundred
elements)."""

import math

import numpy as np
import pytest
import scipy.sparse as sp


# --- eigen -----------------------------------------------------------------------------------

def test_library_names_what_each_factoriser_uses():
    """`library` says which library a factoriser name resolves to for real matrices: the two
    explicit names are themselves whatever is installed, "auto" is PARDISO only with MKL."""
    from femcav.eigen.factorization import library
    from femcav.eigen.pardiso import available

    assert library("superlu") == "superlu"
    assert library("pardiso") == "pardiso"
    assert library("auto") == ("pardiso" if available() else "superlu")


def test_v_cycle_hierarchy_matches_pyamg_and_converges():
    """The V-cycle's operator complexity is pyamg's own for the same hierarchy (sum of the
    levels' non-zeros over the finest's), and the cycle used as a stationary iteration on the
    2D Poisson matrix reduces the error by a large factor per cycle (smoothed aggregation on
    Poisson: common practice; pyamg's gallery matrix as the problem)."""
    import pyamg
    from pyamg.gallery import poisson

    from femcav.eigen.hx import MAX_COARSE, BlockVCycle

    A = poisson((60, 60), format="csr")
    cycle = BlockVCycle(A)
    state = np.random.get_state()
    np.random.seed(2024)
    try:
        reference = pyamg.smoothed_aggregation_solver(A, max_coarse=MAX_COARSE, max_levels=25,
                                                      keep=False, improve_candidates=None)
    finally:
        np.random.set_state(state)
    assert cycle.n_levels == len(reference.levels) >= 2
    assert cycle.operator_complexity == pytest.approx(reference.operator_complexity(), rel=1e-12)

    from scipy.sparse.linalg import LinearOperator, cg

    b = np.random.default_rng(3).standard_normal(A.shape[0])
    counts = {}
    for name, preconditioner in (("none", None),
                                 ("v-cycle", LinearOperator(A.shape, matvec=cycle))):
        steps = []
        x, info = cg(A, b, M=preconditioner, rtol=1e-8, maxiter=2000,
                     callback=lambda xk: steps.append(1))
        assert info == 0 and np.linalg.norm(A @ x - b) <= 1e-7 * np.linalg.norm(b)
        counts[name] = len(steps)
    assert counts["v-cycle"] <= 25 and counts["none"] >= 4 * counts["v-cycle"], counts


# --- post: mode labels on closed-form fields -------------------------------------------------

BOX = (0.02286, 0.01016, 0.030)


def box_fields(points, index, amplitude):
    """E of a rectangular cavity's (m, n, l) standing wave with component amplitudes
    ``amplitude`` (divergence-free when amplitude · (mπ/a, nπ/b, lπ/d) = 0) and H ∝ curl E
    (Pozar, Microwave Engineering, 4th ed., §6.3; from memory)."""
    (a, b, d), (m, n, l) = BOX, index
    km, kn, kl = m * np.pi / a, n * np.pi / b, l * np.pi / d
    assert abs(np.dot(amplitude, (km, kn, kl))) < 1e-9 * np.linalg.norm(amplitude) * (km + kn + kl)
    Ax, Ay, Az = amplitude
    X, Y, Z = km * points[:, 0], kn * points[:, 1], kl * points[:, 2]
    s, c = np.sin, np.cos
    E = np.column_stack([Ax * c(X) * s(Y) * s(Z), Ay * s(X) * c(Y) * s(Z), Az * s(X) * s(Y) * c(Z)])
    H = np.column_stack([(Az * kn - Ay * kl) * s(X) * c(Y) * c(Z),
                         (Ax * kl - Az * km) * c(X) * s(Y) * c(Z),
                         (Ay * km - Ax * kn) * c(X) * c(Y) * s(Z)])
    return E, H


def te_tm_amplitudes(index):
    """Amplitudes of the TE (E_z = 0) and TM (H_z = 0) fields of one index triple, unit size."""
    (a, b, d), (m, n, l) = BOX, index
    km, kn, kl = m * np.pi / a, n * np.pi / b, l * np.pi / d
    te, tm = np.array([kn, -km, 0.0]), np.array([km * kl, kn * kl, -(km**2 + kn**2)])
    return te / np.linalg.norm(te), tm / np.linalg.norm(tm)


@pytest.mark.parametrize("index, te_part, tm_part, label", [
    ((1, 0, 1), 1.0, 0.0, "TE101"),
    ((1, 1, 1), 1.0, 0.0, "TE111"),
    ((1, 1, 1), 0.0, 1.0, "TM111"),
    ((1, 1, 1), 1.0, 1.0, "TE/TM111 (degenerate pair, mixed)"),
    ((2, 1, 0), 0.0, 1.0, "TM210"),
])
def test_box_label_of_closed_form_fields(index, te_part, tm_part, label):
    from femcav.post.classify import box_label

    rng = np.random.default_rng(5)
    points = rng.random((4000, 3)) * BOX
    te, tm = te_tm_amplitudes(index)
    E, H = box_fields(points, index, te_part * te + tm_part * tm)
    assert box_label(points, np.full(len(points), 1.0 / len(points)), E, H, BOX) == label


def test_azimuthal_order_is_read_where_the_field_is_strong():
    """TM_310 of a pillbox, E_z = J_3(p31 r / a) cos 3φ (Pozar, Microwave Engineering, 4th ed.,
    §6.4; scipy.special for J_3 and its zero), plus noise of 1e-3 of the peak. Near the axis
    J_3 is below the noise, so the order can only be read off the ring at the strong field."""
    from scipy.special import jn_zeros, jv

    from femcav.post.classify import azimuthal_label

    radius, length = 0.010, 0.015
    rng = np.random.default_rng(7)
    r = radius * np.sqrt(rng.random(20000))
    r[0] = 1e-6                                            # the first point on the axis
    phi, z = 2 * np.pi * rng.random(r.size), length * rng.random(r.size)
    points = np.column_stack([r * np.cos(phi), r * np.sin(phi), z])
    ez = jv(3, jn_zeros(3, 1)[0] * r / radius) * np.cos(3 * phi)
    ez += 1e-3 * np.abs(ez).max() * rng.standard_normal(r.size)
    E = np.column_stack([np.zeros_like(ez), np.zeros_like(ez), ez])
    H = np.column_stack([np.sin(3 * phi), np.cos(3 * phi), np.zeros_like(ez)])
    w = np.full(r.size, 1.0 / r.size)
    assert azimuthal_label(points, w, E, H) == "m = 3, TM-like"


# --- post: error bars from matched frequencies -----------------------------------------------

def test_estimate_matched_on_an_exact_h_squared_sequence():
    """f(h) = f0 + C h² exactly (Richardson's model): the fit recovers f0 and the rate 2; a
    mode missing on the coarsest mesh says so and is still extrapolated from the rest; one
    found on the finest mesh alone gets no bar."""
    from femcav.post.error_estimate import estimate_matched

    sizes = np.array([2.0e-3, 1.6e-3, 1.28e-3, 1.0e-3])
    f0 = np.array([9.0e9, 11.0e9, 13.0e9])
    C = np.array([2e14, -1e14, 3e14])
    exact = [list(f0 + C * h * h) for h in sizes]
    exact[0][1] = None                      # mode 2 not found on the coarsest mesh
    for k in range(3):
        exact[k][2] = None                  # mode 3 only on the finest
    overlaps = [[1.0] * 3 for _ in sizes]
    first, second, third = estimate_matched(sizes, exact, overlaps, order_rate=2.0)
    assert first.extrapolated_hz == pytest.approx(f0[0], rel=1e-7)
    assert first.fitted_rate == pytest.approx(2.0, rel=1e-6) and not first.fallback
    assert first.reason == ""
    assert second.extrapolated_hz == pytest.approx(f0[1], rel=1e-9)
    assert second.reason.startswith("matched on 3 of 4 meshes")
    assert second.matched_hz[0] is None
    assert abs(second.frequency_hz - f0[1]) <= second.error_estimate_hz
    assert third.error_estimate_hz is None and third.reason == "no coarser mesh has this mode"
