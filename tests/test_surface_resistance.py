"""Walls given by their surface resistance, directly or as superconducting niobium
(femcav.wall_resistance, femcav.superconductors), and the geometry factor G = Q_wall R_s.

References: the low-temperature BCS expression for niobium quoted by H. Padamsee, J.
Knobloch and T. Hays, RF Superconductivity for Accelerators, Wiley 1998, ch. 5 (from
memory): R_BCS = 2e-4 Ω (1 K / T) (f / 1.5 GHz)² exp(−17.67 K / T), about 11 nΩ at 1.3 GHz
and 2 K (10 to 20 nΩ is the range commonly quoted there). The pillbox TM010 geometry factor
G = η p01 / (2 (1 + a/L)) from its wall Q (D. M. Pozar, Microwave Engineering, 4th ed.,
§6.4; derived in tests/test_losses.py), so Q_0 = G / R_s.
"""

from __future__ import annotations

import math

import pytest
from scipy.constants import c, epsilon_0, mu_0
from scipy.special import jn_zeros

from femcav.axisymmetric.model import make_axisymmetric_model
from femcav.axisymmetric.solve import solve_axisymmetric
from femcav.case import case_from_data
from femcav.errors import InputError
from femcav.geometry import BUILDERS
from femcav.geometry.parts import Sizing
from femcav.geometry.section import mesh_section
from femcav.materials import Material
from femcav.merit import with_figures_of_merit
from femcav.metals import CONDUCTIVITY_S_PER_M, surface_resistance
from femcav.superconductors import NIOBIUM, bcs_resistance
from femcav.units import parse_quantity
from femcav.wall_resistance import wall_surface_resistance
from femcav.walls import Wall

A, L = 0.100, 0.115          # a pillbox whose TM010 is near 1.15 GHz
P01 = jn_zeros(0, 1)[0]
G_EXACT = math.sqrt(mu_0 / epsilon_0) * P01 / (2 * (1 + A / L))


def published_r_bcs(f_ghz: float, t_k: float) -> float:
    """Padamsee, Knobloch and Hays, ch. 5 (from memory), in its own units: ohms."""
    return 2e-4 / t_k * (f_ghz / 1.5) ** 2 * math.exp(-17.67 / t_k)


def test_bcs_resistance_of_niobium_at_1_3_ghz_and_2_k():
    value = bcs_resistance(NIOBIUM, 1.3e9, 2.0)
    assert value == pytest.approx(published_r_bcs(1.3, 2.0), rel=1e-12)
    assert 10e-9 <= value <= 20e-9            # the range commonly quoted (from memory)
    # f² at a fixed temperature, and a fall by the Boltzmann factor when cooled
    assert bcs_resistance(NIOBIUM, 2.6e9, 2.0) == pytest.approx(4 * value, rel=1e-12)
    assert bcs_resistance(NIOBIUM, 1.3e9, 1.8) / value == pytest.approx(
        (2.0 / 1.8) * math.exp(-17.67 / 1.8 + 17.67 / 2.0), rel=1e-12)


def test_wall_surface_resistance_of_each_kind_of_wall():
    omega = 2 * math.pi * 1.3e9
    niobium = Wall("metal", metal="niobium", temperature=2.0, residual_resistance=10e-9)
    assert wall_surface_resistance(niobium, omega) == pytest.approx(
        published_r_bcs(1.3, 2.0) + 10e-9, rel=1e-12)
    given = Wall("metal", surface_resistance=3e-3)
    assert wall_surface_resistance(given, omega) == 3e-3
    assert wall_surface_resistance(given, 2 * omega) == 3e-3     # the same at every f
    copper = Wall("metal", conductivity=CONDUCTIVITY_S_PER_M["copper"])
    # R_s = sqrt(ωμ0/2σ) (Pozar §1.7, common practice)
    assert wall_surface_resistance(copper, omega) == pytest.approx(
        math.sqrt(omega * mu_0 / (2 * CONDUCTIVITY_S_PER_M["copper"])), rel=1e-12)


@pytest.mark.parametrize("text, ohms", [("10 nohm", 1e-8), ("10 nΩ", 1e-8), ("3 mohm", 3e-3),
                                        ("2.5 uohm", 2.5e-6), ("1 ohm", 1.0)])
def test_resistance_units(text, ohms):
    assert parse_quantity(text, "resistance") == pytest.approx(ohms, rel=1e-12)


def section_model(walls):
    section = mesh_section(BUILDERS["pillbox"].layout(radius=A, length=L), Sizing(size=0.005))
    return make_axisymmetric_model(section, {"inside": Material()}, walls)


def test_niobium_pillbox_q_is_g_over_r_s():
    # every wall niobium at 2 K with 10 nΩ residual: Q_0 = G / R_s(f), R_s from the published
    # expression at the mode's own frequency
    walls = {w: Wall("metal", metal="niobium", temperature=2.0, residual_resistance=10e-9)
             for w in ("side", "bottom", "top")}
    result = with_figures_of_merit(solve_axisymmetric(section_model(walls), orders=(0,),
                                                      modes=1, order=3), None)
    mode = result.modes[0]
    assert mode.frequency_hz == pytest.approx(c * P01 / (2 * math.pi * A), rel=1e-6)
    r_s = published_r_bcs(mode.frequency_hz / 1e9, 2.0) + 10e-9
    assert mode.losses.q_wall == pytest.approx(G_EXACT / r_s, rel=1e-5)
    assert mode.geometry_factor_ohm == pytest.approx(G_EXACT, rel=1e-5)


def test_geometry_factor_does_not_depend_on_the_metals():
    # niobium on the side, a given R_s on one plate and copper on the other: Q_wall changes,
    # G (from each wall's share of the loss and its own R_s) stays the closed form
    walls = {"side": Wall("metal", metal="niobium", temperature=1.8, residual_resistance=5e-9),
             "bottom": Wall("metal", surface_resistance=1e-3),
             "top": Wall("metal", conductivity=CONDUCTIVITY_S_PER_M["copper"])}
    result = with_figures_of_merit(solve_axisymmetric(section_model(walls), orders=(0,),
                                                      modes=1, order=3), None)
    mode = result.modes[0]
    assert mode.geometry_factor_ohm == pytest.approx(G_EXACT, rel=1e-5)
    # the walls hold L/(a+L) and a/(2(a+L)) each of ∮|H_t|² dS (tests/test_losses.py), so
    # 1/Q_wall = Σ_w share_w R_s,w / G
    omega = 2 * math.pi * mode.frequency_hz
    r_s = [bcs_resistance(NIOBIUM, mode.frequency_hz, 1.8) + 5e-9, 1e-3,
           surface_resistance(omega, CONDUCTIVITY_S_PER_M["copper"])]
    shares = [L / (A + L), A / (2 * (A + L)), A / (2 * (A + L))]
    expected = G_EXACT / sum(s * r for s, r in zip(shares, r_s))
    assert mode.losses.q_wall == pytest.approx(expected, rel=1e-5)


BASE = {"geometry": {"builder": "pillbox", "radius": "100 mm", "length": "115 mm"}}


def wall_case(tmp_path, **side):
    return case_from_data({**BASE, "walls": {"side": {"kind": "metal", **side}}},
                          tmp_path / "case.toml")


def test_case_file_walls_read_their_surface_resistance(tmp_path):
    given = wall_case(tmp_path, surface_resistance="20 nohm").walls["side"]
    assert given.surface_resistance == pytest.approx(20e-9)
    niobium = wall_case(tmp_path, metal="niobium", temperature="2 K",
                        residual_resistance="10 nohm").walls["side"]
    assert (niobium.temperature, niobium.residual_resistance) == (2.0, pytest.approx(1e-8))


@pytest.mark.parametrize("side, field", [
    ({"metal": "niobium", "residual_resistance": "10 nohm"}, "walls.side.temperature"),
    ({"metal": "niobium", "temperature": "2 K"}, "walls.side.residual_resistance"),
    ({"metal": "niobium", "temperature": "6 K", "residual_resistance": "1 nohm"},
     "walls.side.temperature"),                   # above T_c / 2: outside the approximation
    ({"metal": "niobium", "temperature": "2 K", "residual_resistance": "1 nohm",
      "roughness": "1 um"}, "walls.side.roughness"),
    ({"metal": "copper", "temperature": "2 K"}, "walls.side.temperature"),
    ({"surface_resistance": "1 mohm", "conductivity": "58 MS/m"}, "walls.side.conductivity"),
    ({"surface_resistance": "1 mohm", "metal": "copper"}, "walls.side.metal"),
    ({"surface_resistance": "0 ohm"}, "walls.side.surface_resistance"),
    ({"surface_resistance": "10 nS/m"}, "walls.side.surface_resistance"),
])
def test_wall_mistakes_are_refused_at_their_key(tmp_path, side, field):
    with pytest.raises(InputError) as error:
        wall_case(tmp_path, **side)
    assert error.value.field == field
