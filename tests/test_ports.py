"""Waveguide ports (femcav.ports): the TE modes of a port face, and the loaded resonance of
a short-circuited guide with a dielectric slab ending in a matched TE10 port, against
transmission-line theory solved here in complex frequency."""

import cmath
import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.constants import c
from scipy.optimize import brentq, newton
from scipy.special import jn_zeros, jnp_zeros, jvp, yvp

from femcav.errors import InputError
from femcav.fem.space import build_space
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.model import make_model
from femcav.ports.cross_section import port_modes, propagation_constant
from femcav.ports.loaded_solve import solve_with_ports
from femcav.walls import Wall

A, B = 0.02286, 0.01016          # WR-90 broad and narrow walls (common practice)
SHORT_TO_SLAB, SLAB, SLAB_TO_PORT, SLAB_EPS = 0.015, 0.002, 0.007, 10.0


def _cutoffs(port, kind):
    return np.sqrt([k for k, what in zip(port.cutoff_k_squared, port.kinds) if what == kind])


def test_te_and_tm_cutoffs_of_a_rectangular_and_a_circular_face():
    mesh = build_part("box", mesh_size=0.003, width=A, height=B, length=0.02)
    space = build_space(make_model(mesh, {"inside": Material()}, {"z_max": Wall("port")}),
                        "E", 2)
    port = port_modes(space, "z_max", 6)
    # TE_mn and TM_mn of a rectangular guide: k_c = √((mπ/a)² + (nπ/b)²), TM needs m, n ≥ 1
    # (Pozar, Microwave Engineering, 4th ed., §3.3): TE10, TE20, TE01; TM11, TM21
    assert _cutoffs(port, "TE")[:3] == pytest.approx([math.pi / A, 2 * math.pi / A,
                                                      math.pi / B], rel=1e-3)
    assert _cutoffs(port, "TM")[:2] == pytest.approx(
        [math.hypot(math.pi / A, math.pi / B), math.hypot(2 * math.pi / A, math.pi / B)],
        rel=1e-3)
    # all modes by cut-off: TE10 TE20 TE01 TE11 TM11 ..., and no TEM in a hollow guide
    assert list(port.kinds[:5]) == ["TE"] * 4 + ["TM"]
    assert np.all(np.diff(port.cutoff_k_squared) >= 0)
    mesh = build_part("pillbox", mesh_size=0.002, radius=0.01, length=0.01)
    space = build_space(make_model(mesh, {"inside": Material()}, {"top": Wall("port")}),
                        "E", 2)
    port = port_modes(space, "top", 6)
    # circular guide TE_nm: k_c a = p'_nm, the zeros of J_n'; TM_nm: k_c a = p_nm, the
    # zeros of J_n (Pozar, §3.4): the TE11 pair and TE21, TM01 and the TM11 pair; the
    # polygon of 2 mm chords moves them by a few 0.1 %
    assert _cutoffs(port, "TE")[:3] * 0.01 == pytest.approx(
        [jnp_zeros(1, 1)[0]] * 2 + [jnp_zeros(2, 1)[0]], rel=6e-3)
    assert _cutoffs(port, "TM")[:3] * 0.01 == pytest.approx(
        [jn_zeros(0, 1)[0]] + [jn_zeros(1, 1)[0]] * 2, rel=6e-3)
    assert "TEM" not in port.kinds


def test_a_coaxial_face_has_one_tem_mode():
    # A coaxial line's only mode without cut-off is its TEM mode (Pozar, §3.5); its next,
    # TE11, is cut off at the lowest root of J_1'(k_c a) Y_1'(k_c b) − J_1'(k_c b) Y_1'(k_c a)
    # = 0 (the TE_n1 condition ∂H_z/∂ρ = 0 on both conductors; Pozar, §3.5; from
    # memory), found here with brentq; 158.2 /m for these radii (2/(a + b) = 153.8 /m)
    a, b = 0.003, 0.01
    mesh = build_part("coax", mesh_size=0.003, outer_radius=b, inner_radius=a, length=0.01)
    space = build_space(make_model(mesh, {"inside": Material()}, {"top": Wall("port")}),
                        "E", 2)
    port = port_modes(space, "top", 1)
    assert port.kinds[0] == "TEM" and port.kinds.count("TEM") == 1
    assert port.cutoff_k_squared[0] == 0.0
    assert port.kinds[1] == "TE"

    def te11(k):
        return jvp(1, k * a) * yvp(1, k * b) - jvp(1, k * b) * yvp(1, k * a)

    exact = brentq(te11, 100.0, 200.0)
    # the polygons of 3 mm chords: measured +0.7 %
    assert math.sqrt(port.cutoff_k_squared[1]) == pytest.approx(exact, rel=0.015)


def _voltage_at_short(k0):
    """V(0) of the TE10 line when only an outgoing wave leaves the slab towards the
    matched port: V = 1, I = V/Z_1 just beyond the slab, carried back through the slab and
    the air section by the transfer (ABCD) matrices of line sections, [[cos βl, jZ sin βl],
    [j sin βl / Z, cos βl]] with Z_TE = ωμ/β ∝ k0/β (Pozar, §2.4, §3.1, §4.4). A resonance
    of the loaded resonator is a complex k0 with V(0) = 0 at the short."""
    kc = math.pi / A

    def section(eps, length):
        beta = cmath.sqrt(k0**2 * eps - kc**2)
        z = k0 / beta
        return np.array([[cmath.cos(beta * length), 1j * z * cmath.sin(beta * length)],
                         [1j * cmath.sin(beta * length) / z, cmath.cos(beta * length)]])
    wave = np.array([1.0, cmath.sqrt(k0**2 - kc**2) / k0])
    return (section(1.0, SHORT_TO_SLAB) @ section(SLAB_EPS, SLAB) @ wave)[0]


def _exact_resonance(f_guess):
    k = newton(_voltage_at_short, 2 * math.pi * f_guess / c * (1 + 0.01j), tol=1e-13,
               maxiter=100)
    return complex(c * k / (2 * math.pi))


def _slab_resonator(size, order=2, near_hz=12e9):
    mesh = build_part("loaded_box", mesh_size=size, width=A, height=B,
                      length=SHORT_TO_SLAB + SLAB + SLAB_TO_PORT,
                      block_corner=(0, 0, SHORT_TO_SLAB), block_size=(A, B, SLAB))
    model = make_model(mesh, {"air": Material(), "block": Material(eps_r=SLAB_EPS)},
                       {"z_max": Wall("port")})
    return solve_with_ports(model, modes=1, near_hz=near_hz, order=order)


def _check_against_line_theory(result, f_tolerance, q_tolerance):
    exact = _exact_resonance(12e9)
    q_exact = exact.real / (2 * exact.imag)
    assert 10 < q_exact < 100                  # a strongly coupled resonance (33.9)
    (mode,) = result.modes
    assert mode.checks.passed
    assert mode.frequency_hz == pytest.approx(exact.real, rel=f_tolerance)
    assert mode.loading.q_external["z_max"] == pytest.approx(q_exact, rel=q_tolerance)
    # lossless walls: the loaded Q is the external one
    assert mode.loading.q_loaded == pytest.approx(mode.loading.q_external["z_max"])


def test_slab_resonator_with_a_matched_port_coarse():
    # 5 mm, order 2 (2.9k DOFs, ~4 s): measured f +5.9e-4 and Q_ext +0.8 %; Q_ext moves
    # about 2 Q times the relative error of the complex frequency
    _check_against_line_theory(_slab_resonator(0.005), 5e-3, 0.03)


@pytest.mark.slow
def test_slab_resonator_with_a_matched_port_fine():
    # 5 mm, order 3 (9.3k DOFs, ~28 s): measured f +8.7e-6 and Q_ext −0.016 % (order 2 at
    # 3 mm: +5.5e-5 and +1.4 %; order 3 at 4 mm: +4.4e-6 and −0.011 %)
    _check_against_line_theory(_slab_resonator(0.005, order=3), 1e-4, 0.003)


def test_propagation_constant_branch():
    # β > 0 above cut-off, −jα below it (e^{−jβz} decays away from the port)
    assert propagation_constant(5.0, 1.0) == pytest.approx(2.0)
    assert propagation_constant(1.0, 5.0) == pytest.approx(-2.0j)


def test_a_port_must_be_planar_and_outside():
    mesh = build_part("pillbox", mesh_size=0.004, radius=0.01, length=0.01)
    space = build_space(make_model(mesh, {"inside": Material()}, {"side": Wall("port")}))
    with pytest.raises(InputError, match="planar") as info:
        port_modes(space, "side", 1)
    assert info.value.field == "walls.side"
    # the slab's face towards the port, named as a wall: an inner face between regions
    mesh = build_part("loaded_box", mesh_size=0.005, width=A, height=B, length=0.02,
                      block_corner=(0, 0, 0.01), block_size=(A, B, 0.002))
    on_face = np.abs(mesh.points[mesh.tets][..., 2] - 0.012) < 1e-9      # (n_tets, 4)
    inner = np.unique(np.array([sorted(t[on]) for t, on in zip(mesh.tets, on_face)
                                if on.sum() == 3]), axis=0)
    named = replace(mesh, faces=np.vstack([mesh.faces, inner]),
                    face_tag=np.concatenate([mesh.face_tag, np.full(len(inner), 99)]),
                    wall_names={**mesh.wall_names, "window": 99})
    with pytest.raises(InputError, match="not on its boundary") as info:
        make_model(named, {"air": Material(), "block": Material(eps_r=4.0)},
                   {"window": Wall("port")})
    assert info.value.field == "walls.window"


def test_a_shorted_mode_that_propagates_is_reported():
    # The slab resonator's next resonance (line theory: 19.78 GHz, Q_ext 16.9) lies above
    # the cut-offs of TE20 (13.1 GHz), TE01 (14.8 GHz) and TE11 (16.1 GHz). TE10 and TE20
    # are terminated; TE01 and the others are shorted and reported. The slab holds weakly
    # radiating modes next to this one, so four modes are asked for and the one nearest the
    # exact complex frequency is checked.
    exact = _exact_resonance(19.8e9)
    mesh = build_part("loaded_box", mesh_size=0.005, width=A, height=B,
                      length=SHORT_TO_SLAB + SLAB + SLAB_TO_PORT,
                      block_corner=(0, 0, SHORT_TO_SLAB), block_size=(A, B, SLAB))
    model = make_model(mesh, {"air": Material(), "block": Material(eps_r=SLAB_EPS)},
                       {"z_max": Wall("port", port_modes=2)})
    modes = solve_with_ports(model, modes=4, near_hz=exact.real, order=2).modes
    mode = min(modes, key=lambda m: abs(m.complex_frequency_hz - exact))
    # 5 mm is a third of the free-space wavelength here: measured f +3.6e-3, Q_ext +14 %
    assert mode.frequency_hz == pytest.approx(exact.real, rel=5e-3)
    assert mode.loading.q_external["z_max"] == pytest.approx(exact.real / (2 * exact.imag),
                                                            rel=0.2)
    assert len(mode.loading.propagation_constant["z_max"]) == 2
    assert any("port_modes >= 3" in w for w in mode.loss_warnings)
    assert not any("port_modes >= 2" in w for w in mode.loss_warnings)


CASE = """title = "Larkspur Microwave Works: a slab on a WR-90 port (made-up scenario)"
[geometry]
builder = "loaded_box"
width = "22.86 mm"
height = "10.16 mm"
length = "24 mm"
block_corner = ["0 mm", "0 mm", "15 mm"]
block_size = ["22.86 mm", "10.16 mm", "2 mm"]
[regions.block]
eps_r = 10
[walls.z_max]
kind = "port"
[walls.z_min]
kind = "metal"
metal = "copper"
[mesh]
size = "6 mm"
[solve]
order = 2
modes = 1
near = "12 GHz"
"""


def test_a_case_with_a_port_writes_its_q_factors_and_response(tmp_path):
    import csv
    import json

    from femcav.case import load_case
    from femcav.solve_command import run_case

    path = tmp_path / "slab.toml"
    path.write_text(CASE)
    _, _, folder = run_case(path, out=tmp_path / "out")
    (row,) = json.loads((folder / "modes.json").read_text())["modes"]
    q_ext, q0 = row["q_external"]["z_max"], row["q_total"]
    # 1/Q_L = 1/Q_0 + 1/Q_ext and β = Q_0/Q_ext (Pozar, Microwave Engineering, 4th ed., §6.7)
    assert row["q_loaded"] == pytest.approx(1 / (1 / q0 + 1 / q_ext))
    assert row["coupling_factor"]["z_max"] == pytest.approx(q0 / q_ext)
    with open(folder / "response.csv") as f:
        rows = list(csv.DictReader(f))
    assert {(r["to_port"], r["from_port"]) for r in rows} == {("z_max", "z_max")}
    # the reflection dip sits at the mode's frequency: |S11| = |β − 1|/(β + 1) there
    dip = min(rows, key=lambda r: float(r["magnitude_db"]))
    assert float(dip["frequency_hz"]) == pytest.approx(row["frequency_hz"], rel=1e-3)
    beta = row["coupling_factor"]["z_max"]
    assert float(dip["magnitude_db"]) == pytest.approx(
        20 * math.log10(abs(beta - 1) / (beta + 1)), abs=0.01)
    path.write_text('[geometry]\nbuilder = "pillbox"\nradius = "10 mm"\nlength = "10 mm"\n'
                    '[walls.top]\nkind = "port"\n[solve]\nazimuthal_orders = [0]\n')
    with pytest.raises(InputError, match="3D solves only") as info:
        load_case(path)
    assert info.value.field == "walls.top.kind"
    path.write_text(CASE.replace('kind = "metal"\n', 'kind = "metal"\nport_modes = 2\n'))
    with pytest.raises(InputError, match="port_modes belongs") as info:
        load_case(path)
    assert info.value.field == "walls.z_min.port_modes"


def test_the_plain_solver_refuses_ports():
    from femcav.solver import solve_model

    mesh = build_part("box", mesh_size=0.008, width=A, height=B, length=0.02)
    model = make_model(mesh, {"inside": Material()}, {"z_max": Wall("port")})
    with pytest.raises(ValueError, match="solve_with_ports"):
        solve_model(model, modes=1)
    with pytest.raises(InputError) as info:
        solve_with_ports(model, modes=1, form="H")
    assert info.value.option == "form"


@pytest.mark.slow
def test_two_ports_share_the_loss_of_a_symmetric_resonator(tmp_path):
    # (slow: 6 s of CPU, 12 s on the loaded 2-core machine)
    # Two 2 mm slabs (ε_r 10) 16 mm apart in a 40 mm WR-90 section, a port at each end
    # (an imported gmsh mesh). Line theory: the resonance where the waves leave through both
    # ends, V + Z_1 I = 0 at the first slab's outer face for an outgoing wave beyond the
    # second (transfer matrices as above, Pozar §4.4); by symmetry each port takes half
    # the loss, Q_ext = 2 Q.
    from conftest import box_with_blocks

    from femcav.geometry import read_mesh
    from femcav.io.port_table import resonance
    from femcav.post.response import s_parameter

    gap = 0.016
    kc = math.pi / A

    def section(k0, eps, length):
        beta = cmath.sqrt(k0**2 * eps - kc**2)
        z = k0 / beta
        return np.array([[cmath.cos(beta * length), 1j * z * cmath.sin(beta * length)],
                         [1j * cmath.sin(beta * length) / z, cmath.cos(beta * length)]])

    def mismatch(k0):
        z1 = k0 / cmath.sqrt(k0**2 - kc**2)
        v, i = (section(k0, SLAB_EPS, SLAB) @ section(k0, 1.0, gap)
                @ section(k0, SLAB_EPS, SLAB) @ np.array([1.0, 1.0 / z1]))
        return v + z1 * i

    exact = complex(c * newton(mismatch, 2 * math.pi * 11.5e9 / c * (1 + 0.02j), tol=1e-13,
                               maxiter=100) / (2 * math.pi))
    q_exact = exact.real / (2 * exact.imag)
    path = box_with_blocks(tmp_path / "two.msh", (A, B, 0.040),
                           {"slab_a": (0, 0, 0.010, A, B, SLAB),
                            "slab_b": (0, 0, 0.010 + SLAB + gap, A, B, SLAB)}, 0.005)
    model = make_model(read_mesh(path), {"air": Material(), "slab_a": Material(eps_r=SLAB_EPS),
                                         "slab_b": Material(eps_r=SLAB_EPS)},
                       {"z_min": Wall("port"), "z_max": Wall("port")})
    (mode,) = solve_with_ports(model, modes=1, near_hz=exact.real, order=2).modes
    q = mode.loading.q_external
    # measured: f +1.9e-4, Q +1.1 %, the two ports' Q_ext 0.12 % apart
    assert mode.frequency_hz == pytest.approx(exact.real, rel=5e-3)
    assert 1 / (1 / q["z_min"] + 1 / q["z_max"]) == pytest.approx(q_exact, rel=0.03)
    assert q["z_min"] == pytest.approx(q["z_max"], rel=0.02)
    # lossless and symmetric: all power passes at resonance, |S21| = 2 Q_L/√(Q_1 Q_2) = 1
    # (common practice)
    through = s_parameter(resonance(mode), "z_max", "z_min", [mode.frequency_hz])[0]
    assert abs(through) == pytest.approx(1.0, abs=0.02)
