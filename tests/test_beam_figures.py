"""Beam figures (femcav.post.beam, femcav.merit) of a pillbox's TM010 mode against closed forms.

The pillbox, radius a and length L, axis z from 0 to L (D. M. Pozar, Microwave Engineering,
4th ed., §6.4; T. P. Wangler, RF Linear Accelerators, 2nd ed., ch. 2 and 5; from memory).
TM010: E_z = E0 J0(kr), H_φ = (E0/η) J1(kr) in quadrature, k = p01/a, ω = c k. Derived here:

- stored energy W = (ε0/2) ∫|E|² dV = (ε0/2) E0² L 2π ∫_0^a J0(kr)² r dr (= (ε0/2) E0² L π a²
  J1(p01)²; the integral is done with scipy.integrate.quad below);
- along the axis, V = E0 |∫_0^L e^{jωz/(βc)} dz| = E0 L |sin x / x|, x = ωL/(2βc), and
  ∫|E_z| dz = E0 L, so T = sin x / x (β = 1: x = kL/2);
- R/Q = V² / (ω W) (linac convention);
- G = Q_wall R_s = η p01 / (2 (1 + a/L)) (from the TM010 wall Q of Pozar §6.4, also in
  tests/test_losses.py);
- surface fields: on the end plates |E| = E0 J0(kr), largest at r = 0; on the side wall
  E_z = E0 J0(p01) = 0. So E_pk = E0 and, with E_acc = V/L = E0 T, E_pk/E_acc = 1/T.
  μ0 |H_φ| = (μ0/η) E0 J1(kr) = E0 J1(kr)/c peaks where J1 does, at kr = 1.8412 < p01, on
  the end plates; so B_pk/E_acc = max J1 / (c T) (T per V/m; 1e9 times that in mT per MV/m).
"""

from __future__ import annotations

import json
import math

import pytest
from scipy.constants import c, epsilon_0, mu_0
from scipy.integrate import quad
from scipy.optimize import minimize_scalar
from scipy.special import j0, j1, jn_zeros

from femcav.axisymmetric.model import make_axisymmetric_model
from femcav.axisymmetric.solve import solve_axisymmetric
from femcav.case import case_from_data
from femcav.cli import main
from femcav.errors import InputError
from femcav.geometry import BUILDERS, build_part
from femcav.geometry.parts import Sizing
from femcav.geometry.section import mesh_section
from femcav.io.results import mode_rows, to_csv, to_table
from femcav.materials import Material
from femcav.merit import with_figures_of_merit
from femcav.model import make_model
from femcav.post.beam import BeamRequest
from femcav.solver import solve_model
from femcav.viz.report import write_report
from femcav.walls import Wall

A, L = 0.010, 0.015
P01 = jn_zeros(0, 1)[0]
K = P01 / A
OMEGA = c * K
ETA = math.sqrt(mu_0 / epsilon_0)
RS = 1e-3                      # a surface resistance given directly, ohms
WALLS = {w: Wall("metal", surface_resistance=RS) for w in ("side", "bottom", "top")}


def closed_form(line_length=L, velocity=1.0):
    """(V, T, R/Q, E_pk/E_acc, B_pk/E_acc in mT per MV/m) at W = 1 J, for the axis from
    z = 0 over ``line_length`` (see the module notes)."""
    radial, _ = quad(lambda r: j0(K * r) ** 2 * r, 0, A, epsabs=0, epsrel=1e-13)
    e0 = math.sqrt(1.0 / (epsilon_0 / 2 * L * 2 * math.pi * radial))
    x = OMEGA * line_length / (2 * velocity * c)
    t = abs(math.sin(x) / x)
    v = e0 * line_length * t
    j1_max = -minimize_scalar(lambda s: -j1(s), bounds=(1, 2.5), method="bounded",
                              options={"xatol": 1e-12}).fun
    e_acc = v / line_length
    return v, t, v**2 / OMEGA, e0 / e_acc, e0 * j1_max / c / e_acc * 1e9


G_EXACT = ETA * P01 / (2 * (1 + A / L))


def figures_of(result, request=BeamRequest()):
    return with_figures_of_merit(result, request).modes


@pytest.fixture(scope="module")
def axisymmetric():
    # order 3 on a 0.7 mm section: measured errors of every figure below 4e-7
    section = mesh_section(BUILDERS["pillbox"].layout(radius=A, length=L), Sizing(size=7e-4))
    model = make_axisymmetric_model(section, {"inside": Material()}, WALLS)
    return solve_axisymmetric(model, orders=(0, 1), modes=2, order=3)


def tm010(modes):
    return next(m for m in modes if getattr(m, "m", 0) == 0)


def test_axisymmetric_tm010_figures_match_the_closed_forms(axisymmetric):
    mode = tm010(figures_of(axisymmetric))
    v, t, r_over_q, e_ratio, b_ratio = closed_form()
    beam = mode.beam
    assert beam.voltage_v == pytest.approx(v, rel=1e-6)
    assert beam.transit_time_factor == pytest.approx(t, rel=1e-6)
    assert beam.e_acc_v_per_m == pytest.approx(v / L, rel=1e-6)
    assert beam.r_over_q_ohm == pytest.approx(r_over_q, rel=1e-6)
    assert beam.e_peak_over_e_acc == pytest.approx(e_ratio, rel=1e-6)
    assert beam.b_peak_over_e_acc_mt_per_mv_per_m == pytest.approx(b_ratio, rel=1e-6)
    # where they sit: E at the centre of an end plate, B on an end plate at kr = 1.8412
    assert beam.e_peak_at_m[0] == pytest.approx(0, abs=1e-9)
    assert beam.e_peak_at_m[2] in (pytest.approx(0, abs=1e-12), pytest.approx(L, abs=1e-12))
    assert beam.b_peak_at_m[0] == pytest.approx(1.841183781 / K, rel=1e-4)
    assert beam.b_peak_at_m[2] in (pytest.approx(0, abs=1e-12), pytest.approx(L, abs=1e-12))
    # Q_0 = G / R_s (one R_s on every wall, no dielectric loss) and R = (R/Q) Q_0
    assert mode.geometry_factor_ohm == pytest.approx(G_EXACT, rel=1e-5)
    assert mode.losses.q_total == pytest.approx(G_EXACT / RS, rel=1e-5)
    assert beam.shunt_impedance_ohm == pytest.approx(r_over_q * G_EXACT / RS, rel=1e-5)


def test_axisymmetric_line_velocity_and_part_of_the_axis(axisymmetric):
    # β = 0.8: T = sin x / x with x = ωL/(2βc); the reversed axis gives the same figures;
    # half the axis: V = E0 (L/2) |sinc(ωL/4c)|, E_acc = 2V/L
    slow = tm010(figures_of(axisymmetric, BeamRequest(velocity=0.8))).beam
    v, t, r_over_q, _, _ = closed_form(velocity=0.8)
    assert slow.transit_time_factor == pytest.approx(t, rel=1e-6)
    assert slow.r_over_q_ohm == pytest.approx(r_over_q, rel=1e-6)
    reverse = tm010(figures_of(axisymmetric, BeamRequest(start=(0, 0, L), end=(0, 0, 0)))).beam
    assert reverse.voltage_v == pytest.approx(closed_form()[0], rel=1e-6)
    half = tm010(figures_of(axisymmetric, BeamRequest(start=(0, 0, 0), end=(0, 0, L / 2))))
    v_half, t_half, _, _, _ = closed_form(line_length=L / 2)
    assert half.beam.voltage_v == pytest.approx(v_half, rel=1e-6)
    assert half.beam.e_acc_v_per_m == pytest.approx(2 * v_half / L, rel=1e-6)
    assert half.beam.transit_time_factor == pytest.approx(t_half, rel=1e-6)


def test_active_length_sets_e_acc_and_leaves_the_line_integral_whole(axisymmetric):
    # The trade quotes a chain of cells with beam pipes as V over the whole axis (pipes
    # included: a passing charge crosses them) and E_acc = V / (N cell lengths) (common
    # practice; Padamsee, Knobloch and Hays, ch. 1, from memory). With an active length
    # L_a, V, T and R/Q stay those of the whole line, E_acc = V / L_a and the peak ratios
    # scale by L_a / L.
    v, t, r_over_q, e_ratio, b_ratio = closed_form()
    quoted = tm010(figures_of(axisymmetric, BeamRequest(active_length=0.6 * L))).beam
    assert quoted.voltage_v == pytest.approx(v, rel=1e-6)
    assert quoted.transit_time_factor == pytest.approx(t, rel=1e-6)
    assert quoted.r_over_q_ohm == pytest.approx(r_over_q, rel=1e-6)
    assert quoted.e_acc_v_per_m == pytest.approx(v / (0.6 * L), rel=1e-6)
    assert quoted.e_peak_over_e_acc == pytest.approx(0.6 * e_ratio, rel=1e-6)
    assert quoted.b_peak_over_e_acc_mt_per_mv_per_m == pytest.approx(0.6 * b_ratio, rel=1e-6)
    assert quoted.line.summary()["active_length_m"] == pytest.approx(0.6 * L)


def test_modes_with_m_of_one_have_no_field_on_the_axis(axisymmetric):
    # cos φ fields have no axial part on the axis: no voltage, no transit-time factor
    dipole = next(m for m in figures_of(axisymmetric) if m.m == 1)
    assert dipole.beam.voltage_v == 0.0 and dipole.beam.r_over_q_ohm == 0.0
    assert dipole.beam.transit_time_factor is None
    assert dipole.beam.e_peak_over_e_acc is None
    assert dipole.geometry_factor_ohm > 0


def test_surface_peaks_on_a_curved_wall_match_the_sphere_closed_form():
    # The peak sampler on curved (6-node) section walls: a PEC sphere of radius a, its
    # lowest TM mode (n = 1, m = 0) at the first root x of (x j1(x))' = 0, k = x / a.
    # H_φ = A j1(kr) sin θ, so B_pk = μ0 A j1(x) on the equator, and E_r = 2 cos θ A j1(kr)
    # / (jωε0 r) at the wall, so E_pk = B_pk · 2c / x at the poles (R. F. Harrington,
    # Time-Harmonic Electromagnetic Fields, 1961, §6-11, from memory; A from W = 1 J by
    # quadrature). Order 3 at a/8: measured errors 3e-5 (E_pk) and 5.5e-5 (B_pk); 3e-4
    # leaves room, and catches a wrong normal on a curved wall (E_r for E·n fails it). Both
    # peaks sit at mesh vertices (pole, equator), so this does not test the search between
    # samples; the elliptical cell's figures do (tests/test_elliptical_cell.py).
    from scipy.optimize import brentq
    from scipy.special import spherical_jn

    from femcav.axisymmetric.beam_fields import surface_peaks
    from femcav.geometry.parts import Layout
    from femcav.geometry.profile import EllipticArc, RevolvedProfile

    a = 0.010
    x = brentq(lambda s: spherical_jn(1, s) + s * spherical_jn(1, s, derivative=True), 2, 3.5)
    radial, _ = quad(lambda r: spherical_jn(1, x * r / a) ** 2 * r**2, 0, a, epsrel=1e-12)
    amplitude = math.sqrt(2 / (mu_0 * radial * 8 * math.pi / 3))     # ∫ sin³θ dθ dφ = 8π/3
    b_peak = mu_0 * amplitude * spherical_jn(1, x)
    sphere = RevolvedProfile((EllipticArc((0.0, 0.0), a, a, math.pi, math.pi / 2),
                              EllipticArc((0.0, 0.0), a, a, math.pi / 2, 0.0)))
    section = mesh_section(Layout(space=[sphere], background="inside"),
                           Sizing(size=a / 8, curved=True))
    result = solve_axisymmetric(make_axisymmetric_model(section, {"inside": Material()}, {}),
                                orders=(0,), modes=1, order=3)
    mode = result.modes[0]
    peaks = surface_peaks(result.spaces[0], mode.dofs, 2 * math.pi * mode.frequency_hz)
    assert peaks.b_peak_t == pytest.approx(b_peak, rel=3e-4)
    assert peaks.e_peak_v_per_m == pytest.approx(b_peak * 2 * c / x, rel=3e-4)
    assert math.hypot(peaks.b_peak_at[0], peaks.b_peak_at[2]) == pytest.approx(a, rel=1e-4)
    assert abs(peaks.b_peak_at[2]) < 0.05 * a                    # on the equator
    assert abs(peaks.e_peak_at[2]) == pytest.approx(a, rel=1e-4)  # at a pole


def test_without_beam_the_geometry_factor_is_in_the_files_not_the_table(axisymmetric):
    # G = η p01 / (2 (1 + a/L)) for TM010 with or without [beam]; the table keeps its columns
    result = with_figures_of_merit(axisymmetric, None)
    rows = mode_rows(result)
    assert rows[0]["geometry_factor_ohm"] == pytest.approx(G_EXACT, rel=1e-5)
    assert "beam" not in rows[0]
    assert "G ohm" not in to_table(result) and "geometry_factor_ohm" in to_csv(result)


def test_3d_tm010_figures_within_one_percent():
    # Curved quadratic tetrahedra, order 3, 4 mm (about 10k DOFs, H form): measured errors
    # T 2e-4, R/Q 2e-4, E_pk/E_acc 2.5e-3, B_pk/E_acc 3e-4. (Order 2 at 3 mm gives V, T
    # and R/Q within 0.2 % but the peak fields only within 1.8 %: a peak is a pointwise
    # value, here of the curl of the unknown; order 2 at 2 mm is within 0.5 % but takes
    # three times as long.)
    mesh = build_part("pillbox", radius=A, length=L, mesh_size=0.004, curved=True)
    result = solve_model(make_model(mesh, {"inside": Material()}, WALLS), modes=1, form="H",
                         order=3)
    mode = figures_of(result)[0]
    v, t, r_over_q, e_ratio, b_ratio = closed_form()
    beam = mode.beam
    assert beam.voltage_v == pytest.approx(v, rel=1e-2)
    assert beam.transit_time_factor == pytest.approx(t, rel=1e-2)
    assert beam.r_over_q_ohm == pytest.approx(r_over_q, rel=1e-2)
    assert beam.e_peak_over_e_acc == pytest.approx(e_ratio, rel=1e-2)
    assert beam.b_peak_over_e_acc_mt_per_mv_per_m == pytest.approx(b_ratio, rel=1e-2)
    assert math.hypot(*beam.e_peak_at_m[:2]) < 0.15 * A
    assert math.hypot(*beam.b_peak_at_m[:2]) == pytest.approx(1.841183781 / K, abs=0.004)
    assert mode.geometry_factor_ohm == pytest.approx(G_EXACT, rel=1e-2)
    assert mode.losses.q_wall * RS == pytest.approx(mode.geometry_factor_ohm, rel=1e-12)


def test_3d_box_tm110_on_lines_off_the_axis():
    # A PEC box a x b x d (d smallest): TM110 has E_z = E0 sin(πx/a) sin(πy/b), uniform in z,
    # k = sqrt((π/a)² + (π/b)²) (Pozar §6.3, from memory). W = (ε0/2) E0² a b d / 4; a line
    # parallel to z at (x, y) has V = E0 sin(πx/a) sin(πy/b) d |sin X / X|, X = ωd/2c, and
    # T = sin X / X. E_pk = E0, at the centre of the end plates. E form, order 2, 3 mm:
    # measured V within 8e-4, T 2e-4, E_pk/E_acc 3e-3 (the H form's E, the curl of the
    # unknown, is 0.7 to 1.7 % off in V here).
    a, b, d = 0.022, 0.018, 0.010
    part = build_part("box", width=a, height=b, length=d, mesh_size=0.003)
    result = solve_model(make_model(part, {"inside": Material()}, {}), modes=1, form="E",
                         order=2)
    omega = c * math.hypot(math.pi / a, math.pi / b)
    e0 = math.sqrt(1.0 / (epsilon_0 / 2 * a * b * d / 4))
    x = omega * d / (2 * c)
    for xs, ys in ((a / 2, b / 2), (a / 4, b / 2)):
        beam = figures_of(result, BeamRequest(start=(xs, ys, 0), end=(xs, ys, d)))[0].beam
        v = e0 * math.sin(math.pi * xs / a) * math.sin(math.pi * ys / b) * d * math.sin(x) / x
        assert beam.voltage_v == pytest.approx(v, rel=3e-3)
        assert beam.transit_time_factor == pytest.approx(math.sin(x) / x, rel=1e-3)
        assert beam.r_over_q_ohm == pytest.approx(v**2 / omega, rel=6e-3)
        assert beam.e_peak_over_e_acc == pytest.approx(e0 / (v / d), rel=1e-2)
        assert beam.e_peak_at_m[2] in (pytest.approx(0, abs=1e-12), pytest.approx(d, abs=1e-12))


def test_a_3d_line_that_leaves_the_part_counts_no_field_outside():
    # The axis extended 5 mm beyond both end plates: the field outside the part is zero, so V
    # stays (within the mesh error) and E_acc falls by L / (L + 10 mm).
    mesh = build_part("pillbox", radius=A, length=L, mesh_size=0.004, curved=True)
    result = solve_model(make_model(mesh, {"inside": Material()}, WALLS), modes=1, form="H",
                         order=2)
    inner = figures_of(result)[0].beam
    outer = figures_of(result, BeamRequest(start=(0, 0, -0.005), end=(0, 0, L + 0.005)))[0].beam
    assert outer.voltage_v == pytest.approx(inner.voltage_v, rel=1e-9)
    assert outer.e_acc_v_per_m == pytest.approx(inner.e_acc_v_per_m * L / (L + 0.01), rel=1e-9)


CASE = """
title = "LMW-B1 test pillbox (made up)"
[geometry]
builder = "pillbox"
radius = "10 mm"
length = "15 mm"
[mesh]
size = "1 mm"
[walls.side]
kind = "metal"
metal = "copper"
[solve]
modes = 2
azimuthal_orders = [0, 1]
[beam]
"""


def test_case_file_beam_figures_reach_every_output(tmp_path, capsys):
    path = tmp_path / "beam.toml"
    path.write_text(CASE)
    out = tmp_path / "out"
    assert main(["solve", str(path), "--out", str(out), "--no-report", "-q"]) == 0
    printed = capsys.readouterr().out
    assert "R/Q ohm" in printed and "G ohm" in printed
    document = json.loads((out / "modes.json").read_text())
    assert document["beam_line"]["to_m"] == pytest.approx([0, 0, L])
    first = document["modes"][0]
    assert set(first["beam"]) >= {"voltage_v", "transit_time_factor", "e_acc_v_per_m",
                                  "r_over_q_ohm", "shunt_impedance_ohm", "e_peak_over_e_acc",
                                  "b_peak_over_e_acc_mt_per_mv_per_m"}
    assert first["beam"]["transit_time_factor"] == pytest.approx(closed_form()[1], rel=1e-4)
    # copper on the side wall only: G = Q_wall R_s over that wall alone, not G_EXACT
    assert first["geometry_factor_ohm"] > G_EXACT
    header = (out / "modes.csv").read_text().splitlines()[0].split(",")
    assert {"geometry_factor_ohm", "r_over_q_ohm", "transit_time_factor"} <= set(header)
    assert "R/Q ohm" in (out / "table.txt").read_text()
    report = tmp_path / "report.html"
    write_report(document, {}, report)
    assert "Figures of merit" in report.read_text()


BASE = {"geometry": {"builder": "pillbox", "radius": "10 mm", "length": "15 mm"},
        "solve": {"modes": 2}}


@pytest.mark.parametrize("extra, field", [
    ({"beam": {"from": ["0 mm", "0 mm", "0 mm"]}}, "beam.to"),
    ({"beam": {"from": ["0 mm", "0 mm", "1 mm"], "to": ["0 mm", "0 mm", "1 mm"]}}, "beam.to"),
    ({"beam": {}, "symmetry": {"x": "pmc"}}, "beam"),
    ({"beam": {"velocity": 1.5}}, "beam.velocity"),
    ({"beam": {"active_length": "-1 mm"}}, "beam.active_length"),
    ({"beam": {"active_length": "115"}}, "beam.active_length"),      # no unit
    ({"beam": {"from": ["1 mm", "0 mm", "0 mm"], "to": ["1 mm", "0 mm", "15 mm"]},
      "solve": {"modes": 2, "azimuthal_orders": [0]}}, "beam.from"),
])
def test_beam_table_mistakes_are_refused_at_their_key(tmp_path, extra, field):
    data = {**BASE, **extra}
    with pytest.raises(InputError) as error:
        case_from_data(data, tmp_path / "case.toml")
    assert error.value.field == field


def test_a_box_has_no_default_beam_line(tmp_path):
    data = {"geometry": {"builder": "box", "width": "20 mm", "height": "10 mm",
                         "length": "30 mm"}, "beam": {}}
    with pytest.raises(InputError, match="give from and to"):
        case_from_data(data, tmp_path / "case.toml")
    data["beam"] = {"from": ["10 mm", "5 mm", "0 mm"], "to": ["10 mm", "5 mm", "30 mm"]}
    case = case_from_data(data, tmp_path / "case.toml")
    assert case.beam.start == pytest.approx((0.01, 0.005, 0.0))
    assert case.beam.velocity == 1.0
    assert case.beam.active_length is None
    data["beam"]["active_length"] = "115.4 mm"
    assert case_from_data(data, tmp_path / "case.toml").beam.active_length == pytest.approx(
        0.1154)
