"""Q factors by perturbation against closed forms and a worked textbook example, and against
the direct complex eigen solve."""

import json
import math

import meshio
import numpy as np
import pytest
from scipy.constants import c, epsilon_0, mu_0
from scipy.special import jn_zeros

from femcav.analytic.slab import slab_filling_factor, slab_te_m0p_frequencies
from femcav.cli import main
from femcav.geometry import build_part
from femcav.materials import Material
from femcav.metals import CONDUCTIVITY_S_PER_M, surface_resistance
from femcav.model import make_model
from femcav.solver import solve_model
from femcav.walls import Wall

COPPER = CONDUCTIVITY_S_PER_M["copper"]
BOX_WALLS = ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max")


def metal(names, sigma=COPPER, **extra):
    return {n: Wall("metal", conductivity=sigma, **extra) for n in names}


def te10l_q_wall(a, b, d, l, eps_r, sigma):
    """Pozar, Microwave Engineering, 4th ed., §6.3, eq. (6.46) (from memory):
    Q_c = (k a d)³ b η / (2π² R_s) / (2 l² a³ b + 2 b d³ + l² a³ d + a d³)."""
    k = math.pi * math.sqrt(1 / a**2 + (l / d) ** 2)
    f = c * k / (2 * math.pi * math.sqrt(eps_r))
    eta = math.sqrt(mu_0 / (epsilon_0 * eps_r))
    rs = surface_resistance(2 * math.pi * f, sigma)
    return (k * a * d) ** 3 * b * eta / (2 * math.pi**2 * rs) / (
        2 * l**2 * a**3 * b + 2 * b * d**3 + l**2 * a**3 * d + a * d**3)


@pytest.mark.parametrize("form", ["E", "H"])
def test_te101_wall_q_matches_closed_form(form):
    a, b, d = 0.02286, 0.01016, 0.030
    mesh = build_part("box", width=a, height=b, length=d, mesh_size=0.002)
    result = solve_model(make_model(mesh, {"inside": Material()}, metal(BOX_WALLS)),
                         modes=1, form=form)
    q = result.modes[0].losses.q_wall
    assert q == pytest.approx(te10l_q_wall(a, b, d, 1, 1.0, COPPER), rel=1e-2)
    assert result.modes[0].losses.q_dielectric is None


def test_pozar_worked_example_copper_polyethylene_cavity():
    # Pozar, Microwave Engineering, 4th ed., Example 6.3 (numbers from memory): copper WR-187
    # (a = 4.755 cm, b = 2.215 cm) filled with polyethylene (eps_r = 2.25, tan δ = 0.0004),
    # resonant at 5 GHz in TE101 for d = 2.20 cm; the book gives Q_c = 8403, Q_d = 2500 and
    # Q = 1927. (Its R_s = 1.84e-2 Ω and d rounded to 2.20 cm.)
    a, b, d = 0.04755, 0.02215, 0.0220
    mesh = build_part("box", width=a, height=b, length=d, mesh_size=0.003)
    model = make_model(mesh, {"inside": Material(eps_r=2.25, tan_delta=4e-4)}, metal(BOX_WALLS))
    mode = solve_model(model, modes=1, form="H").modes[0]
    assert mode.frequency_hz == pytest.approx(5.0e9, rel=5e-3)
    assert mode.losses.q_wall == pytest.approx(8403, rel=1e-2)
    assert mode.losses.q_dielectric == pytest.approx(2500, rel=1e-9)
    assert mode.losses.q_total == pytest.approx(1927, rel=1e-2)


def test_pillbox_tm010_wall_q_and_its_split():
    # TM010: E_z = E0 J0(p01 r / a), H_φ = (E0/η) J1(p01 r / a). W = ε π a² d E0² J1²/2; the
    # side wall loses R_s π a d (E0 J1/η)², the two end plates R_s π a² (E0 J1/η)², so
    # Q = p01 η d / (2 R_s (a + d)), split d/(a+d) : a/(a+d) (derived from the fields of
    # Pozar §6.4; common practice).
    radius, length = 0.010, 0.015
    mesh = build_part("pillbox", radius=radius, length=length, mesh_size=0.0012)
    result = solve_model(make_model(mesh, {"inside": Material()},
                                    metal(("side", "bottom", "top"))), modes=1, form="H")
    mode = result.modes[0]
    p01 = jn_zeros(0, 1)[0]
    rs = surface_resistance(2 * math.pi * mode.frequency_hz, COPPER)
    eta = math.sqrt(mu_0 / epsilon_0)
    exact = p01 * eta * length / (2 * rs * (radius + length))
    assert mode.losses.q_wall == pytest.approx(exact, rel=1e-2)
    share = mode.losses.wall_loss_share
    assert share["side"] == pytest.approx(length / (radius + length), abs=5e-3)
    assert share["bottom"] + share["top"] == pytest.approx(radius / (radius + length), abs=5e-3)


def test_filled_cavity_q_dielectric_is_one_over_tan_delta():
    # Completely filled: every mode has filling factor 1 and Q_d = 1/tan δ (Pozar §6.3).
    mesh = build_part("box", width=0.02, height=0.01, length=0.025, mesh_size=0.004)
    for form in ("E", "H"):
        result = solve_model(make_model(mesh, {"inside": Material(eps_r=4.0, tan_delta=2e-4)},
                                        {}), modes=3, form=form)
        for mode in result.modes:
            assert mode.losses.q_dielectric == pytest.approx(5000, rel=1e-6)
            assert mode.losses.filling_factor["inside"] == pytest.approx(1.0, rel=1e-12)
            assert mode.losses.q_wall is None


@pytest.fixture(scope="module")
def slab_model(tmp_path_factory):
    from conftest import box_with_blocks
    from femcav.geometry import read_mesh
    a, b, d, t = 0.02286, 0.01016, 0.030, 0.006
    path = box_with_blocks(tmp_path_factory.mktemp("slab") / "slab.msh", (a, b, d),
                           {"slab": (0, 0, 0, t, b, d)}, mesh_size=0.0015)
    return (a, b, d, t), read_mesh(path)


def test_half_filled_filling_factor_matches_slab_closed_form(slab_model):
    (a, b, d, t), mesh = slab_model
    model = make_model(mesh, {"air": Material(), "slab": Material(eps_r=4.0, tan_delta=1e-3)},
                       {})
    mode = solve_model(model, modes=1).modes[0]
    f_ref = slab_te_m0p_frequencies(a, t, d, 4.0, 1, 1)[0]
    k0 = 2 * math.pi * f_ref / c
    expected = slab_filling_factor(k0, a, t, 4.0, math.pi / d)
    assert mode.losses.filling_factor["slab"] == pytest.approx(expected, rel=1e-2)
    assert mode.losses.q_dielectric == pytest.approx(1 / (expected * 1e-3), rel=1e-2)


@pytest.mark.parametrize("form", ["E", "H"])
def test_perturbation_agrees_with_the_complex_solve(slab_model, form):
    (a, b, d, t), mesh = slab_model
    model = make_model(mesh, {"air": Material(), "slab": Material(eps_r=4.0, tan_delta=1e-3)},
                       {})
    result = solve_model(model, modes=3, form=form, complex_check=True)
    for mode in result.modes:
        assert mode.q_dielectric_complex == pytest.approx(mode.losses.q_dielectric, rel=1e-2)
        assert mode.complex_frequency_hz == pytest.approx(mode.frequency_hz, rel=1e-5)


def test_wall_q_scales_as_square_root_of_conductivity():
    # R_s = sqrt(ω μ0 / 2σ), so Q_wall ∝ sqrt(σ) (common practice).
    mesh = build_part("box", width=0.02, height=0.01, length=0.025, mesh_size=0.004)
    q = [solve_model(make_model(mesh, {"inside": Material()}, metal(BOX_WALLS, sigma)),
                     modes=1).modes[0].losses.q_wall for sigma in (COPPER, COPPER / 4)]
    assert q[0] / q[1] == pytest.approx(2.0, rel=1e-9)


def test_roughness_lowers_q_by_the_hammerstad_factor():
    # With rms roughness equal to the skin depth, K = 1 + (2/π) atan(1.4) = 1.6063
    # (Hammerstad and Jensen 1980, from memory).
    mesh = build_part("box", width=0.02, height=0.01, length=0.025, mesh_size=0.004)
    smooth = solve_model(make_model(mesh, {"inside": Material()}, metal(BOX_WALLS)), modes=1)
    omega = 2 * math.pi * smooth.modes[0].frequency_hz
    delta = math.sqrt(2 / (omega * mu_0 * COPPER))
    rough = solve_model(make_model(mesh, {"inside": Material()},
                                   metal(BOX_WALLS, roughness=delta)), modes=1)
    ratio = smooth.modes[0].losses.q_wall / rough.modes[0].losses.q_wall
    assert ratio == pytest.approx(1 + 2 / math.pi * math.atan(1.4), rel=1e-9)


LOSSY_CASE = """
[geometry]
builder = "pillbox"
radius = "10 mm"
length = "15 mm"
[mesh]
size = "2.5 mm"
[regions.inside]
eps_r = "2.1-0.00042j"
[walls.side]
kind = "metal"
metal = "silver"
[walls.top]
kind = "metal"
conductivity = "41 MS/m"
[solve]
modes = 2
complex_check = true
"""


def test_case_file_losses_and_outputs(tmp_path, capsys):
    case = tmp_path / "case.toml"
    case.write_text(LOSSY_CASE)
    assert main(["solve", str(case), "-q"]) == 0
    assert "Q wall" in capsys.readouterr().out
    folder = tmp_path / "case-results"
    doc = json.loads((folder / "modes.json").read_text())
    mode = doc["modes"][0]
    # eps_r = 2.1 (1 - j 2e-4): Q_d = 1/2e-4 for a filled cavity.
    assert mode["q_dielectric"] == pytest.approx(5000, rel=1e-6)
    assert mode["q_dielectric_complex"] == pytest.approx(5000, rel=1e-3)
    assert set(mode["wall_loss_share"]) == {"side", "top"}   # the bottom stays perfect
    assert sum(mode["wall_loss_share"].values()) == pytest.approx(1.0)
    assert 1 / mode["q_total"] == pytest.approx(1 / mode["q_wall"] + 1 / mode["q_dielectric"])
    # The wall-loss file integrates back to the wall Q: P = ω W / Q_wall with W = 1 J.
    walls = meshio.read(folder / "wall_loss.vtu")
    tri = walls.points[walls.cells_dict["triangle"]]
    area = 0.5 * np.linalg.norm(np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0]), axis=1)
    power = np.sum(area * walls.cell_data["m01_loss"][0])
    assert power == pytest.approx(2 * math.pi * mode["frequency_hz"] / mode["q_wall"], rel=1e-9)
    assert "q_wall" in (folder / "modes.csv").read_text().splitlines()[0]
    # No form given and metal walls: the H form, whose wall Q converges like h².
    assert doc["form"] == "H"


BAD = {
    "negative conductivity": ('[walls.side]\nkind = "metal"\nconductivity = "-5 MS/m"\n',
                              "walls.side.conductivity: must be positive"),
    "unknown metal": ('[walls.side]\nkind = "metal"\nmetal = "unobtainium"\n',
                      "walls.side.metal: unknown metal 'unobtainium'; known: silver, copper"),
    "loss on a pmc wall": ('[walls.side]\nkind = "pmc"\nconductivity = "58 MS/m"\n',
                           "walls.side.conductivity: conductivity belongs to kind = \"metal\"; "
                           "a PMC wall has no loss"),
    "metal without conductivity": ('[walls.side]\nkind = "metal"\n',
                                   "walls.side: a metal wall needs exactly one of"),
    "negative tan delta": ('[regions.inside]\neps_r = 2\ntan_delta = -0.01\n',
                           "regions.inside.tan_delta: must be a number >= 0"),
    "gain in complex eps": ('[regions.inside]\neps_r = "2+0.01j"\n',
                            "regions.inside.eps_r: a complex eps_r needs"),
}


@pytest.mark.parametrize("name", list(BAD))
def test_bad_loss_input(tmp_path, capsys, name):
    extra, expected = BAD[name]
    case = tmp_path / "case.toml"
    case.write_text('[geometry]\nbuilder = "pillbox"\nradius = "10 mm"\nlength = "15 mm"\n'
                    + extra)
    assert main(["solve", str(case), "-q"]) == 2
    err = capsys.readouterr().err
    assert expected in err and len(err.strip().splitlines()) == 1
    assert not (tmp_path / "case-results").exists()
