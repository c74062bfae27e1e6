"""TM- and TEM-terminated ports (femcav.ports): a coaxial line and a circular guide, each
shorted at one end, with a dielectric disc across the guide and a matched port at the other
end; the loaded resonance against transmission-line theory solved here in complex frequency
(the transfer matrices of the line sections, Pozar, Microwave Engineering, 4th ed., §2.4,
§4.4, with the wave impedances of §3.1; every section has the same cross-section, so only
the ratios of the impedances matter)."""

import cmath
import math

import numpy as np
import pytest
from scipy.constants import c
from scipy.optimize import newton
from scipy.special import jn_zeros

from conftest import faces_by_bounds
from femcav.geometry import read_mesh
from femcav.geometry.gmsh_session import gmsh_model
from femcav.materials import Material
from femcav.model import make_model
from femcav.ports.loaded_solve import solve_with_ports
from femcav.walls import Wall



def quarter_guide_with_disc(path, radius, rod_radius, sections, mesh_size):
    """A quarter (x ≥ 0, y ≥ 0) of a round guide of ``radius`` along z, optionally with a
    metal rod of ``rod_radius`` on its axis (a coaxial line), made of three ``sections``
    (lengths): air from the short at z = 0, a disc (region "disc") across the guide, air to
    the port. Walls: z_min, z_max, the cut planes x_cut and y_cut; the round surfaces stay
    unnamed (PEC). Curved (10-node) elements."""
    short_to_disc, disc, disc_to_port = sections
    length = sum(sections)
    with gmsh_model("guide") as gmsh:
        occ = gmsh.model.occ
        pieces = [occ.addCylinder(0, 0, z0, 0, 0, dz, radius, angle=math.pi / 2)
                  for z0, dz in ((0, short_to_disc), (short_to_disc, disc),
                                 (short_to_disc + disc, disc_to_port))]
        if rod_radius:
            rod = occ.addCylinder(0, 0, -0.1 * length, 0, 0, 1.2 * length, rod_radius)
            cut, _ = occ.cut([(3, t) for t in pieces], [(3, rod)])
            pieces = [t for _, t in cut]
        occ.fragment([(3, t) for t in pieces], [])
        occ.synchronize()
        middle = [t for _, t in gmsh.model.getEntities(3)
                  if abs(gmsh.model.occ.getCenterOfMass(3, t)[2]
                         - (short_to_disc + disc / 2)) < 1e-6]
        gmsh.model.addPhysicalGroup(3, middle, name="disc")
        gmsh.model.addPhysicalGroup(3, [t for _, t in gmsh.model.getEntities(3)
                                        if t not in middle], name="air")
        tol = 1e-5          # gmsh enlarges bounding boxes a little
        for name, axis, at in (("z_min", 2, 0.0), ("z_max", 2, length), ("x_cut", 0, 0.0),
                               ("y_cut", 1, 0.0)):
            gmsh.model.addPhysicalGroup(2, faces_by_bounds(
                gmsh, lambda bb, i=axis, v=at: abs(bb[i] - v) < tol and abs(bb[i + 3] - v) < tol),
                name=name)
        gmsh.option.setNumber("Mesh.MeshSizeMax", mesh_size)
        gmsh.option.setNumber("Mesh.Algorithm3D", 1)
        gmsh.model.mesh.generate(3)
        gmsh.model.mesh.setOrder(2)       # curved elements follow the round walls
        gmsh.write(str(path))
    return read_mesh(path, straighten_folded=True)


def solve_quarter(mesh, eps_disc, near_hz, order=2, port_modes=1):
    """The loaded mode nearest ``near_hz``; the cut planes are magnetic walls (PMC), exact
    for the axisymmetric TEM and TM0n fields, whose E lies in the meridional planes and H
    along φ, normal to them (common practice)."""
    model = make_model(mesh, {"air": Material(), "disc": Material(eps_r=eps_disc)},
                       {"z_max": Wall("port", port_modes=port_modes), "x_cut": Wall("pmc"),
                        "y_cut": Wall("pmc")})
    return solve_with_ports(model, modes=1, near_hz=near_hz, order=order)


def line_resonance(f_guess, sections, eps_disc, impedance_and_beta):
    """The complex frequency where the line shorted at z = 0, with the disc, sends only an
    outgoing wave into the matched port: V(0) = 0 for V = 1, I = 1/Z_air beyond the disc,
    carried back by the ABCD matrices [[cos βl, jZ sin βl], [j sin βl / Z, cos βl]] (Pozar,
    §2.4, §4.4). ``impedance_and_beta(k0, eps_r)`` gives the mode's Z (any common scale) and
    β."""
    def section(k0, eps, length):
        z, beta = impedance_and_beta(k0, eps)
        return np.array([[cmath.cos(beta * length), 1j * z * cmath.sin(beta * length)],
                         [1j * cmath.sin(beta * length) / z, cmath.cos(beta * length)]])

    def voltage_at_short(k0):
        z_air, _ = impedance_and_beta(k0, 1.0)
        wave = np.array([1.0, 1.0 / z_air])
        return (section(k0, 1.0, sections[0]) @ section(k0, eps_disc, sections[1]) @ wave)[0]

    k = newton(voltage_at_short, 2 * math.pi * f_guess / c * (1 + 0.01j), tol=1e-13,
               maxiter=100)
    return complex(c * k / (2 * math.pi))


EPS_DISC = 10.0


def test_a_coaxial_line_with_a_disc_and_a_matched_tem_port(tmp_path):
    # 4 mm / 2 mm coaxial line: 12 mm of air from the short, a 3 mm disc of ε_r 10, 3 mm of
    # air to the port. TEM line sections: β = k0 √ε_r, Z = η0/√ε_r times the same
    # geometric factor ln(b/a)/(2π) in every section (Pozar, §2.2, §3.1), so Z ∝ 1/√ε_r.
    sections = (0.012, 0.003, 0.003)
    exact = line_resonance(11e9, sections, EPS_DISC,
                           lambda k0, eps: (1 / math.sqrt(eps), k0 * math.sqrt(eps)))
    q_exact = exact.real / (2 * exact.imag)
    assert 5 < q_exact < 50          # strongly coupled (12.4)
    mesh = quarter_guide_with_disc(tmp_path / "coax.msh", 0.004, 0.002, sections, 0.002)
    result = solve_quarter(mesh, EPS_DISC, exact.real)
    (mode,) = result.modes
    # the face's TEM mode is its lowest and the one terminated; its β is k0 (no cut-off)
    assert mode.checks.passed
    # 2.7k DOFs, order 2: measured f −4.2e-4, Q_ext +0.09 %
    assert mode.frequency_hz == pytest.approx(exact.real, rel=3e-3)
    assert mode.loading.q_external["z_max"] == pytest.approx(q_exact, rel=0.03)
    (beta,) = mode.loading.propagation_constant["z_max"]
    k0 = 2 * math.pi * mode.complex_frequency_hz / c
    assert beta == pytest.approx(k0, rel=1e-9)


def test_a_circular_guide_with_a_disc_and_a_matched_tm01_port(tmp_path):
    # 10 mm radius: 20 mm of air from the short, a 2 mm disc of ε_r 10, 4 mm of air to the
    # port; the resonance (13.65 GHz) lies between the TM01 (11.47 GHz) and TE21 (14.57 GHz)
    # cut-offs. On the quarter with magnetic cut planes the TE11 pair (lower than TM01)
    # is absent, so TM01 is the face's lowest mode. TM line sections: β = √(k0² ε_r − k_c²),
    # Z_TM = β/(ωε) ∝ β/(k0 ε_r), k_c a = p_01 (Pozar, §3.1, §3.4).
    sections, radius = (0.020, 0.002, 0.004), 0.01
    kc = jn_zeros(0, 1)[0] / radius

    def tm01(k0, eps):
        beta = cmath.sqrt(k0**2 * eps - kc**2)
        return beta / (k0 * eps), beta

    exact = line_resonance(13.5e9, sections, EPS_DISC, tm01)
    q_exact = exact.real / (2 * exact.imag)
    assert 5 < q_exact < 50          # 17.3
    mesh = quarter_guide_with_disc(tmp_path / "round.msh", radius, 0, sections, 0.004)
    result = solve_quarter(mesh, EPS_DISC, exact.real)
    (mode,) = result.modes
    assert mode.checks.passed
    assert not mode.loss_warnings    # TE21 and TM11 are cut off at the resonance
    # 4.8k DOFs, order 2, curved: measured f +5.1e-5, Q_ext +1.1 %
    assert mode.frequency_hz == pytest.approx(exact.real, rel=3e-3)
    assert mode.loading.q_external["z_max"] == pytest.approx(q_exact, rel=0.03)
