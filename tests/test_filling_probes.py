"""Magnetic filling factors, field probes and B1/sqrt(P) against the closed-form fields of a
rectangular cavity.

Reference fields: TE10l of an a x b x d box (D. M. Pozar, Microwave Engineering, 4th ed.,
§6.3, the TE10l fields, from memory), with E real:

    E_y = E0 sin(πx/a) sin(lπz/d)
    H_x = -j E0 (lπ/d) / (ω μ0) sin(πx/a) cos(lπz/d)      (Pozar: -j E0 / Z_TE, Z_TE = kη/β)
    H_z =  j E0 (π/a)  / (ω μ0) cos(πx/a) sin(lπz/d)      (Pozar: j π E0 / (k η a))

from ∇×E = -jωμ0 H with time dependence e^{jωt}. Stored energy at resonance, W = 2 W_e =
2 (ε0/4) ∫ |E|² dV = (ε0/2) E0² (a/2) b (d/2) = ε0 E0² a b d / 8, so 1 J stored takes
E0 = sqrt(8 / (ε0 a b d)). 1 W dissipated: P = ω W / Q, so the fields at 1 W are those at
1 J times sqrt(Q / ω), with the wall Q of Pozar eq. (6.46) (tests/test_losses.py).
"""

from __future__ import annotations

import csv
import json
import math

import numpy as np
import pytest
from scipy.constants import epsilon_0, mu_0

from femcav.errors import InputError
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.post.filling import magnetic_filling
from femcav import run_case
from femcav.solver import solve_model

from test_losses import BOX_WALLS, COPPER, te10l_q_wall

A, B, D = 0.02286, 0.01016, 0.030


def te10l_fields(x, y, z, l, omega, a=A, b=B, d=D):
    """Closed-form (E, H) complex vectors of TE10l at 1 J stored (module docstring)."""
    e0 = math.sqrt(8 / (epsilon_0 * a * b * d))
    sx, cx = math.sin(math.pi * x / a), math.cos(math.pi * x / a)
    sz, cz = math.sin(l * math.pi * z / d), math.cos(l * math.pi * z / d)
    E = np.array([0, e0 * sx * sz, 0], dtype=complex)
    H = np.array([-1j * e0 * (l * math.pi / d) / (omega * mu_0) * sx * cz, 0,
                  1j * e0 * (math.pi / a) / (omega * mu_0) * cx * sz])
    return E, H


def slab_shares(t, a=A, d=D):
    """TE101 with a slab 0 <= z <= t across the whole box: from the pattern above,
    |H_x|² ∝ (1/d²) sin²(πx/a) cos²(πz/d) and |H_z|² ∝ (1/a²) cos²(πx/a) sin²(πz/d); the x
    integrals are both a/2, the z integrals over the slab
    C = t/2 + d sin(2πt/d)/(4π) (cos²) and S = t/2 - d sin(2πt/d)/(4π) (sin²), over the
    box d/2 each. Returns the slab's share of ∫|H|², of it the x and z parts, and its share
    of ∫|E|² (E_y ∝ sin(πz/d): S / (d/2))."""
    c2 = t / 2 + d * math.sin(2 * math.pi * t / d) / (4 * math.pi)
    s2 = t / 2 - d * math.sin(2 * math.pi * t / d) / (4 * math.pi)
    whole = (1 / d**2 + 1 / a**2) * d / 2
    return ((c2 / d**2 + s2 / a**2) / whole, (c2 / d**2) / whole, (s2 / a**2) / whole,
            s2 / (d / 2))


def test_filled_box_filling_factors_are_one():
    # A box filled with one material holds all of ∫|E|² and ∫|H|² in that region (common
    # practice); of TE101's ∫|H|², H_z carries (1/a²)/(1/a² + 1/d²) (the x and z integrals
    # of the pattern above are equal).
    mesh = build_part("box", width=A, height=B, length=D, mesh_size=0.006)
    model = make_model(mesh, {"inside": Material(eps_r=2.0, tan_delta=1e-3)}, {})
    result = solve_model(model, modes=1, form="E", order=2)
    mode = result.modes[0]
    assert mode.losses.filling_factor["inside"] == pytest.approx(1.0, abs=1e-12)
    filling = magnetic_filling(result.space, mode.dofs)
    assert filling.total["inside"] == pytest.approx(1.0, abs=1e-12)
    assert filling.along_axis["inside"] == pytest.approx(
        (1 / A**2) / (1 / A**2 + 1 / D**2), rel=5e-3)


@pytest.mark.parametrize("form", ["E", "H"])
def test_thin_slab_at_the_magnetic_maximum(form):
    # A 3 mm vacuum "sample" slab against the z_min wall, where TE101's H_x is largest:
    # its shares against the closed form of the standing-wave pattern (slab_shares).
    t = 0.003
    mesh = build_part("loaded_box", width=A, height=B, length=D, block_corner=(0, 0, 0),
                      block_size=(A, B, t), mesh_size=0.004)
    model = make_model(mesh, {"air": Material(), "block": Material(tan_delta=1e-4)}, {})
    result = solve_model(model, modes=1, form=form, order=2)
    mode = result.modes[0]
    total, along_x, along_z, electric = slab_shares(t)
    filling_z = magnetic_filling(result.space, mode.dofs)                 # default axis z
    filling_x = magnetic_filling(result.space, mode.dofs, axis=(2.0, 0, 0))
    assert filling_z.total["block"] == pytest.approx(total, rel=2e-3)
    assert filling_z.total["block"] + filling_z.total["air"] == pytest.approx(1.0)
    assert filling_x.along_axis["block"] == pytest.approx(along_x, rel=2e-3)
    assert filling_z.along_axis["block"] == pytest.approx(along_z, rel=1e-2)   # small: 4e-3
    assert filling_x.axis == (1.0, 0.0, 0.0)
    assert mode.losses.filling_factor["block"] == pytest.approx(electric, rel=1e-2)


BOX_CASE = """
title = "probe test box"
geometry = {{ builder = "box", width = "22.86 mm", height = "10.16 mm", length = "30 mm" }}
mesh = {{ size = "{size}" }}
{walls}
[solve]
modes = 2
order = 2
{extra}
"""


def box_case(tmp_path, extra, size="3.5 mm", copper=True):
    walls = "".join(f'walls.{w} = {{ kind = "metal", metal = "copper" }}\n' for w in BOX_WALLS)
    path = tmp_path / "box.toml"
    path.write_text(BOX_CASE.format(size=size, walls=walls if copper else "", extra=extra))
    return path


def first_point_fields(probe):
    """E and H of a probe's first point from modes.json, as complex vectors."""
    return tuple(np.array(probe[key]["re"][0]) + 1j * np.array(probe[key]["im"][0])
                 for key in ("e_v_per_m", "h_a_per_m"))


def aligned(E, H, reference_E):
    """E and H with the eigenvector's arbitrary sign chosen as the reference's."""
    sign = np.sign(np.real(np.vdot(reference_E, E)))
    return E * sign, H * sign


@pytest.fixture(scope="module")
def probed_box(tmp_path_factory):
    """A copper box with two point probes and a line probe, solved through its case file:
    (the result folder, its modes.json)."""
    tmp_path = tmp_path_factory.mktemp("probed_box")
    path = box_case(tmp_path, """
[probes.off_centre]
at = ["6 mm", "4 mm", "11 mm"]
[probes.centre]
at = ["11.43 mm", "5.08 mm", "15 mm"]
[probes.along_z]
from = ["11.43 mm", "5.08 mm", "3 mm"]
to = ["11.43 mm", "5.08 mm", "27 mm"]
points = 5
""")
    _, _, folder = run_case(path, out=tmp_path / "out")
    return folder, json.loads((folder / "modes.json").read_text())


def test_point_and_line_probes_of_te101_against_the_closed_form(probed_box):
    point = (0.006, 0.004, 0.011)
    folder, document = probed_box
    te101, te102 = document["modes"][0], document["modes"][1]
    omega = 2 * math.pi * te101["frequency_hz"]
    probe = te101["probes"]["off_centre"]
    E, H = first_point_fields(probe)
    E_ref, H_ref = te10l_fields(*point, 1, omega)
    E, H = aligned(E, H, E_ref)
    scale = np.linalg.norm(E_ref)
    assert np.abs(E - E_ref).max() < 0.01 * scale
    assert np.abs(H - H_ref).max() < 0.01 * np.linalg.norm(H_ref)    # phase: H = ±j·real
    assert probe["e_abs_v_per_m"][0] == pytest.approx(np.linalg.norm(E_ref), rel=0.01)
    assert probe["h_abs_a_per_m"][0] == pytest.approx(np.linalg.norm(H_ref), rel=0.01)

    # 1 W dissipated: the 1 J fields times sqrt(Q / ω), Q from Pozar eq. (6.46)
    q = te10l_q_wall(A, B, D, 1, 1.0, COPPER)
    watt = math.sqrt(q / omega)
    assert probe["e_abs_at_1w_v_per_m"][0] == pytest.approx(np.linalg.norm(E_ref) * watt,
                                                            rel=0.015)
    assert probe["h_abs_at_1w_a_per_m"][0] == pytest.approx(np.linalg.norm(H_ref) * watt,
                                                            rel=0.015)

    # B1/sqrt(P) at the box centre: TE102 has its H_x maximum there (cos(2π z/d) = -1,
    # sin(πx/a) = 1), H_z = 0; B = μ0 |H_x| at 1 W
    omega2 = 2 * math.pi * te102["frequency_hz"]
    centre = (A / 2, B / 2, D / 2)
    _, H2 = te10l_fields(*centre, 2, omega2)
    b1 = mu_0 * np.linalg.norm(H2) * math.sqrt(te10l_q_wall(A, B, D, 2, 1.0, COPPER) / omega2)
    assert te102["probes"]["centre"]["b1_per_sqrt_p_t_per_sqrt_w"][0] == pytest.approx(
        b1, rel=0.01)

    # the line: five points, |E| of TE101 along z at the centre of the cross-section
    line = te101["probes"]["along_z"]
    zs = np.linspace(0.003, 0.027, 5)
    assert line["distance_m"] == pytest.approx(list(zs - zs[0]))
    expected = [np.linalg.norm(te10l_fields(A / 2, B / 2, z, 1, omega)[0]) for z in zs]
    assert line["e_abs_v_per_m"] == pytest.approx(expected, rel=0.015)

    # probes.csv: one row per mode and point, units in the headers
    rows = list(csv.DictReader((folder / "probes.csv").open()))
    assert len(rows) == 2 * (1 + 1 + 5)
    first = rows[0]
    assert (first["mode"], first["probe"], first["point"]) == ("1", "off_centre", "1")
    assert float(first["e_abs_v_per_m"]) == pytest.approx(probe["e_abs_v_per_m"][0],
                                                           rel=1e-8)
    assert float(first["b1_per_sqrt_p_t_per_sqrt_w"]) == pytest.approx(
        probe["b1_per_sqrt_p_t_per_sqrt_w"][0], rel=1e-8)
    # filling factors are in every mode row, the axis z by default
    assert te101["magnetic_filling_factor"] == {"inside": pytest.approx(1.0)}
    assert te101["magnetic_filling_axis"] == [0.0, 0.0, 1.0]


def test_probe_on_the_cut_away_side_of_a_symmetry_plane(tmp_path):
    # The x = a/2 plane cuts the box; TE101 is even there (PMC class). A point at x < a/2
    # is mirrored onto the kept half, and the fields are those of the whole box at 1 J.
    point = (0.006, 0.004, 0.011)
    path = box_case(tmp_path, """
[symmetry]
x = "both"
[filling]
axis = "x"
[probes.p]
at = ["6 mm", "4 mm", "11 mm"]
""", copper=False)
    _, result, folder = run_case(path, out=tmp_path / "out")
    mode = json.loads((folder / "modes.json").read_text())["modes"][0]
    assert mode["symmetry"] == "x:PMC"
    omega = 2 * math.pi * mode["frequency_hz"]
    probe = mode["probes"]["p"]
    E, H = first_point_fields(probe)
    E_ref, H_ref = te10l_fields(*point, 1, omega)
    E, H = aligned(E, H, E_ref)
    assert np.abs(E - E_ref).max() < 0.015 * np.linalg.norm(E_ref)
    assert np.abs(H - H_ref).max() < 0.015 * np.linalg.norm(H_ref)
    # no losses: nothing is dissipated
    assert probe["b1_per_sqrt_p_t_per_sqrt_w"] is None
    assert mode["magnetic_filling_axis"] == [1.0, 0.0, 0.0]
    assert mode["magnetic_filling_factor_axis"]["inside"] == pytest.approx(
        (1 / D**2) / (1 / A**2 + 1 / D**2), rel=5e-3)


@pytest.mark.parametrize("probe, field, words", [
    ('[probes.p]\nat = ["6 mm", "4 mm", "33 mm"]', "probes.p", "outside the part"),
    ('[probes.p]\nat = ["6 mm", "4 mm"]', "probes.p.at", "three values"),
    ('[probes.p]\nat = ["6 mm", "4 mm", "3"]', "probes.p.at[2]", ""),
    ('[probes.p]\nat = ["6 mm", "4 mm", "3 mm"]\nfrom = ["0 mm", "1 mm", "1 mm"]',
     "probes.p", "either"),
    ('[probes.p]\nfrom = ["1 mm", "1 mm", "1 mm"]\nto = ["2 mm", "2 mm", "2 mm"]',
     "probes.p.points", "missing"),
    ('[probes.p]\nfrom = ["1 mm", "1 mm", "1 mm"]\nto = ["2 mm", "2 mm", "2 mm"]\n'
     'points = 1', "probes.p.points", "from 2"),
    ('[probes.p]\nplace = ["1 mm", "1 mm", "1 mm"]', "probes.p.place", "unknown key"),
    ('[probes."a b"]\nat = ["1 mm", "1 mm", "1 mm"]', "probes.a b", "letters"),
    ('[filling]\naxis = "w"', "filling.axis", '"x"'),
    ('[filling]\naxis = [0, 0, 0]', "filling.axis", "zero"),
])
def test_probe_and_filling_mistakes_are_refused_before_anything_is_written(
        tmp_path, probe, field, words):
    path = box_case(tmp_path, probe, size="8 mm", copper=False)
    with pytest.raises(InputError) as caught:
        run_case(path, out=tmp_path / "out")
    assert caught.value.field == field
    assert words in str(caught.value)
    assert not (tmp_path / "out").exists()


def test_line_probe_plot_in_the_report(probed_box, tmp_path):
    # the report embeds one plot per line probe (none for point probes)
    from femcav.viz.probe_plot import line_probe_names, write_probe_plot
    from femcav.viz.report import write_report

    _, document = probed_box
    assert line_probe_names(document) == ["along_z"]
    picture = tmp_path / "probe_along_z.png"
    write_probe_plot(document, "along_z", picture)
    assert picture.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    report = tmp_path / "report.html"
    write_report(document, {"probe_along_z": picture}, report)
    page = report.read_text()
    assert "<h2>Line probes</h2>" in page and page.count("data:image/png") == 1


# --- bodies of revolution (axisymmetric solver) ----------------------------------------------
# Pillbox of radius a and length d (tests/test_axisymmetric.py), fields from Pozar §6.4 (the
# circular-cavity TE_nml and TM_nml modes, from memory), written with E real and
# H = j ∇×E / (ω μ0) as derived in each helper, normalised to 1 J with scipy's quad.

from scipy.integrate import quad
from scipy.special import j0, j1, jn_zeros, jnp_zeros, jvp

from test_axisymmetric import A as PA, D as PD, tm010_wall_q

PILLBOX_CASE = """
title = "probe test pillbox"
geometry = {{ builder = "pillbox", radius = "10 mm", length = "15 mm" }}
mesh = {{ size = "{size}" }}
walls.side = {{ kind = "metal", metal = "copper" }}
walls.bottom = {{ kind = "metal", metal = "copper" }}
walls.top = {{ kind = "metal", metal = "copper" }}
[solve]
{solve}
[filling]
axis = "{axis}"
{probes}
"""

SECTION_SOLVE = "modes = 7\nazimuthal_orders = [0, 1]"


def tm010(r, phi, z, omega):
    """E_z = E0 J0(k r), H_φ = j (E0 / η) J1(k r) (∇×E has φ part -∂E_z/∂r = E0 k J1);
    W = (ε0/2) E0² d 2π ∫ J0²(k r) r dr."""
    k = jn_zeros(0, 1)[0] / PA
    e0 = math.sqrt(2 / (epsilon_0 * PD * 2 * math.pi * quad(lambda s: j0(k * s) ** 2 * s,
                                                             0, PA)[0]))
    h_phi = 1j * e0 * k * j1(k * r) / (omega * mu_0)
    return (np.array([0, 0, e0 * j0(k * r)], dtype=complex),
            np.array([-h_phi * math.sin(phi), h_phi * math.cos(phi), 0]))


def te011_axis_h(z, omega):
    """E_φ = C J1(k r) sin(πz/d), k = p'01 / a; (∇×E)_z = (1/r) ∂(r E_φ)/∂r = C k J0(k r)
    sin(πz/d), so on the axis H_z = j C k sin(πz/d) / (ω μ0); W = (ε0/2) C² (d/2) 2π
    ∫ J1²(k r) r dr."""
    k = jnp_zeros(0, 1)[0] / PA
    c_ = math.sqrt(2 / (epsilon_0 * (PD / 2) * 2 * math.pi
                        * quad(lambda s: j1(k * s) ** 2 * s, 0, PA)[0]))
    return 1j * c_ * k * math.sin(math.pi * z / PD) / (omega * mu_0)


def te111_e(r, phi, z):
    """The member with E_r ∝ cos φ: E_r = -C J1(k r) / (k r) cos φ, E_φ = C J1'(k r) sin φ,
    times sin(πz/d), k = p'11 / a (Pozar's TE_11 pattern with B = 0); W = (ε0/2) C² π (d/2)
    ∫ [(J1(k r)/(k r))² + J1'(k r)²] r dr."""
    k = jnp_zeros(1, 1)[0] / PA
    radial = quad(lambda s: ((j1(k * s) / (k * s)) ** 2 + jvp(1, k * s) ** 2) * s, 0, PA)[0]
    c_ = math.sqrt(2 / (epsilon_0 * math.pi * (PD / 2) * radial))
    e_r = -c_ * j1(k * r) / (k * r) * math.cos(phi) * math.sin(math.pi * z / PD)
    e_p = c_ * jvp(1, k * r) * math.sin(phi) * math.sin(math.pi * z / PD)
    return np.array([e_r * math.cos(phi) - e_p * math.sin(phi),
                     e_r * math.sin(phi) + e_p * math.cos(phi), 0.0])


@pytest.fixture(scope="module")
def probed_pillbox(tmp_path_factory):
    tmp_path = tmp_path_factory.mktemp("probed_pillbox")
    path = tmp_path / "pillbox.toml"
    path.write_text(PILLBOX_CASE.format(size="1 mm", solve=SECTION_SOLVE, axis="x", probes="""
[probes.axis]
at = ["0 mm", "0 mm", "5 mm"]
[probes.off]
at = ["3 mm", "4 mm", "6 mm"]
"""))
    _, _, folder = run_case(path, out=tmp_path / "out")
    return json.loads((folder / "modes.json").read_text())["modes"]


def pick(modes, m, field_class):
    return next(row for row in modes if row["azimuthal_order"] == m
                and row["field_class"] == field_class)


def test_axisymmetric_tm010_probes_and_filling(probed_pillbox):
    mode = pick(probed_pillbox, 0, "TM-like")          # the lowest: TM010
    omega = 2 * math.pi * mode["frequency_hz"]
    watt = math.sqrt(tm010_wall_q(mode["frequency_hz"]) / omega)
    for name, (x, y, z) in (("axis", (0, 0, 0.005)), ("off", (0.003, 0.004, 0.006))):
        E, H = first_point_fields(mode["probes"][name])
        E_ref, H_ref = tm010(math.hypot(x, y), math.atan2(y, x), z, omega)
        E, H = aligned(E, H, E_ref)
        assert np.abs(E - E_ref).max() < 1e-4 * np.linalg.norm(E_ref)
        assert np.abs(H - H_ref).max() < 1e-4 * np.linalg.norm(E_ref) / 377
        if name == "off":
            assert mode["probes"][name]["b1_per_sqrt_p_t_per_sqrt_w"][0] == pytest.approx(
                mu_0 * np.linalg.norm(H_ref) * watt, rel=1e-4)
    # H = H_φ φ̂ only: none along z; along x, the average of sin²φ: one half
    assert mode["magnetic_filling_factor"] == {"inside": pytest.approx(1.0)}
    assert mode["magnetic_filling_factor_axis"]["inside"] == pytest.approx(0.5, rel=1e-6)


def test_axisymmetric_te011_on_the_axis_and_te111_off_it(probed_pillbox):
    te011 = min((row for row in probed_pillbox if row["azimuthal_order"] == 0
                 and row["field_class"] == "TE-like"), key=lambda row: row["frequency_hz"])
    omega = 2 * math.pi * te011["frequency_hz"]
    E, H = first_point_fields(te011["probes"]["axis"])
    expected = te011_axis_h(0.005, omega)
    # H_z divides by r on the section: extrapolated from 1/2 to 1 element off the axis,
    # which leaves the quartic term of J0 (about (k h)⁴ / 64, 4e-4 here) and mesh error
    assert abs(abs(H[2]) - abs(expected)) < 3e-3 * abs(expected)
    # on the axis H_r = 0 (m = 0) and E = E_φ φ̂ vanishes
    assert np.abs(H[:2]).max() == 0.0 and np.abs(E).max() < 1e-6 * abs(expected) * 377

    te111 = pick(probed_pillbox, 1, "TE-like")
    E, H = first_point_fields(te111["probes"]["off"])
    E_ref = te111_e(0.005, math.atan2(0.004, 0.003), 0.006)
    E, H = aligned(E, H, E_ref)
    assert np.abs(E - E_ref).max() < 1e-4 * np.linalg.norm(E_ref)


def test_axisymmetric_probe_outside_the_part_is_refused(tmp_path):
    path = tmp_path / "pillbox.toml"
    path.write_text(PILLBOX_CASE.format(size="1 mm", solve=SECTION_SOLVE, axis="z", probes="""
[probes.far]
at = ["8 mm", "7 mm", "5 mm"]
"""))
    with pytest.raises(InputError) as caught:
        run_case(path, out=tmp_path / "out")
    assert caught.value.field == "probes.far" and "outside the part" in str(caught.value)
    assert not (tmp_path / "out").exists()


THREE_D_SOLVE = 'modes = 1\norder = 2\nform = "E"'


def test_line_probe_to_a_curved_wall_in_3d(tmp_path):
    # The flat facets of a 3D pillbox lie inside its curved side wall, so the last point of a
    # line from the axis to r = a lies just outside the mesh: it must pass. TM010's E_z is
    # J0(p01 r / a) times its axis value, zero at the wall (Pozar §6.4; scipy's j0).
    path = tmp_path / "pillbox3d.toml"
    path.write_text(PILLBOX_CASE.format(size="2.5 mm", solve=THREE_D_SOLVE, axis="z", probes="""
[probes.radial]
from = ["0 mm", "0 mm", "7.5 mm"]
to = ["0 mm", "10 mm", "7.5 mm"]
points = 6
"""))
    _, result, folder = run_case(path, out=tmp_path / "out")
    probe = json.loads((folder / "modes.json").read_text())["modes"][0]["probes"]["radial"]
    k = jn_zeros(0, 1)[0] / PA
    shape = np.abs(j0(k * np.linspace(0, PA, 6)))
    assert np.array(probe["e_abs_v_per_m"]) / probe["e_abs_v_per_m"][0] == pytest.approx(
        shape, abs=0.03)
