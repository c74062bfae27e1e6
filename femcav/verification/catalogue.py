"""The reference cases of `femcav verify`, one small function each.

Every case is a case file (the text a user would write, with one element size filled in),
solved by femcav's own runner, and compared with a closed form or an independent 1D solution
computed at run time from femcav.analytic and scipy (never with stored femcav output). The
expected rates are in h, taken as DOFs^(-1/3) in 3D and DOFs^(-1/2) on a section: eigenvalue
(so also frequency) errors fall like h^(2k) for element order k (D. Boffi, Acta Numerica 19,
2010; from memory); a wall Q from the H form like the frequency, from the E form (where H is
the curl of the unknown) like h^k (measured in 3D at order 1: README, "Worked example";
here at order 3 on the section, 2.8 and 3.1).
Tolerances are on the finest mesh of each list, a few times above the errors measured on the
reference machine, so that a change of factorisation library or BLAS does not trip them and a
wrong solver does.
"""

from __future__ import annotations

import math
from functools import cache
from pathlib import Path

from scipy.constants import c as C0
from scipy.special import jnp_zeros

from ..analytic.box import lowest_box_frequencies
from ..analytic.dielectric_sphere import dielectric_sphere_resonance
from ..analytic.coax import coax_te11p_frequencies, coax_tem_frequencies
from ..analytic.cylinder import lowest_pillbox_frequencies, pillbox_order_frequencies
from ..analytic.graded import graded_te_m0p_frequencies
from ..analytic.layered_guide import layered_guide_band_frequencies
from ..analytic.layered_cylinder import layered_pillbox_te0np_frequencies
from ..analytic.slab import slab_te_m0p_frequencies
from ..analytic.sphere import sphere_order_frequencies
from ..analytic.uniaxial_cylinder import uniaxial_pillbox_modes
from ..analytic.wall_q import box_te10l_q_wall, pillbox_te011_q_wall, pillbox_tm010_q_wall
from .reference_case import Comparison, Quantity, ReferenceCase
from .selection import lowest, mode_of_order, of_order, polarised

SIGMA = 58e6          # S/m, written into the case files as "58 MS/m": the reference uses the
                      # same number, not femcav's metal table
MM = 1e-3
BOX = (22.86 * MM, 10.16 * MM, 30 * MM)      # a WR-90 cross-section, 30 mm long
BOX_WALLS = ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max")
PILLBOX = (10 * MM, 15 * MM)                 # radius, length
# element sizes of the 3D cases: at 6 mm (under two elements across the 10 mm height) the
# rates were still far from their asymptotic values
SIZES_3D = {"quick": (5 * MM, 3.5 * MM), "full": (4 * MM, 2.8 * MM, 2 * MM)}


def _metal(walls) -> str:
    return "".join(f'[walls.{w}]\nkind = "metal"\nconductivity = "58 MS/m"\n' for w in walls)


def _box_geometry(builder: str = "box") -> str:
    return (f'[geometry]\nbuilder = "{builder}"\nwidth = "22.86 mm"\nheight = "10.16 mm"\n'
            'length = "30 mm"\n')


def _pillbox_geometry() -> str:
    return '[geometry]\nbuilder = "pillbox"\nradius = "10 mm"\nlength = "15 mm"\n'


def _size(h: float) -> str:
    return f'[mesh]\nsize = "{h / MM:.6g} mm"\n'


def _frequencies(computed, reference) -> Comparison:
    return Comparison(tuple(computed), tuple(reference))


def _per_order(result, reference_of_order, orders) -> Comparison:
    """Each order's solved modes against that order's lowest references, as many as were
    solved of it (a missing or spurious mode shifts the rest and shows as a large error)."""
    computed, reference = [], []
    for m in orders:
        found = of_order(result, m)
        computed += found
        reference += reference_of_order(m, len(found))[:len(found)] if found else []
    asked = result.request.count if result.request is not None else len(result.modes)
    if len(result.modes) < asked:
        reference.append(math.nan)      # fewer modes than asked: the comparison fails
    return Comparison(tuple(computed), tuple(reference))


def box() -> ReferenceCase:
    """Empty copper box: the lowest six frequencies and the TE101 wall Q."""
    a, b, d = BOX

    def compare(result):
        modes = result.modes[:6]            # in frequency order
        return {
            "f, lowest 6 modes": Comparison(
                tuple(m.frequency_hz for m in modes), tuple(lowest_box_frequencies(a, b, d, 6)),
                bars=tuple(m.error_estimate_hz for m in modes)
                if modes[0].error_estimate_hz is not None else None),
            # Pozar, Microwave Engineering, 4th ed., §6.3, eq. (6.46) (from memory)
            "Q wall, TE101": Comparison((result.modes[0].losses.q_wall,),
                                        (box_te10l_q_wall(a, b, d, 1, SIGMA),), unit="1"),
        }
    return ReferenceCase(
        name="box", title="empty rectangular box, copper walls",
        covers="3D builder mesh, H form, order 2, wall losses, error bars",
        source="Pozar, Microwave Engineering, 4th ed., §6.3 (frequencies and eq. 6.46 for "
               "the TE10l wall Q; from memory)",
        order=2, section=False,
        sizes=SIZES_3D,
        case_text=lambda h: (_box_geometry() + _size(h) + _metal(BOX_WALLS)
                             + "[solve]\nmodes = 6\norder = 2\n"),
        compare=compare, error_bars=True,
        # measured at 3.5 mm: 6.1e-4 and 1.8e-5
        quantities=(Quantity("f, lowest 6 modes", 2e-3, 4.0),
                    Quantity("Q wall, TE101", 5e-4, 4.0)))


def pillbox_3d() -> ReferenceCase:
    """Copper pillbox in 3D on curved quadratic tetrahedra: six frequencies, TM010 wall Q."""
    radius, length = PILLBOX

    def compare(result):
        return {
            "f, lowest 6 modes": _frequencies(lowest(result, 6),
                                              lowest_pillbox_frequencies(radius, length, 6)),
            "Q wall, TM010": Comparison((result.modes[0].losses.q_wall,),
                                        (pillbox_tm010_q_wall(radius, length, SIGMA),),
                                        unit="1"),
        }
    return ReferenceCase(
        name="pillbox_3d", title="pillbox in 3D, curved elements, copper walls",
        covers="3D builder mesh with curved (10-node) tetrahedra, H form, order 2, wall Q",
        source="Pozar, Microwave Engineering, 4th ed., §6.4 (Bessel zeros from "
               "scipy.special; TM010 wall Q from its fields; from memory)",
        order=2, section=False,
        sizes=SIZES_3D,
        case_text=lambda h: (_pillbox_geometry() + _size(h) + "curved = true\n"
                             + _metal(("side", "bottom", "top"))
                             + "[solve]\nmodes = 6\norder = 2\n"),
        compare=compare,
        # measured at 3.5 mm: 8.9e-4 and 3.8e-4 (rates 5.0 and 3.8 from 5 to 2.5 mm)
        quantities=(Quantity("f, lowest 6 modes", 3e-3, 4.0),
                    Quantity("Q wall, TM010", 1.5e-3, 4.0)))


def pillbox() -> ReferenceCase:
    """Copper pillbox on its section, m = 0: TM010 and TE011, frequency and wall Q."""
    radius, length = PILLBOX

    def compare(result):
        out = {}
        # Pozar §6.4: TM010 at p01 c / (2π a), TE011 at c/(2π) sqrt((p'01/a)² + (π/d)²)
        for name, field_class, expected, q in (
                ("TM010", "TM-like", pillbox_order_frequencies(radius, length, 0, 1)[0],
                 pillbox_tm010_q_wall(radius, length, SIGMA)),
                ("TE011", "TE-like", C0 / (2 * math.pi) * math.hypot(
                    jnp_zeros(0, 1)[0] / radius, math.pi / length),
                 pillbox_te011_q_wall(radius, length, SIGMA))):
            mode = mode_of_order(result, 0, field_class, expected)
            found = () if mode is None else (mode.frequency_hz,)
            out[f"f, {name}"] = _frequencies(found, (expected,))
            out[f"Q wall, {name}"] = Comparison(() if mode is None else (mode.losses.q_wall,),
                                                (q,), unit="1")
        return out
    return ReferenceCase(
        name="pillbox", title="pillbox on its (r, z) section, m = 0, copper walls",
        covers="axisymmetric solve, E form, order 3, wall Q of TM and TE modes",
        source="Pozar, Microwave Engineering, 4th ed., §6.4 (Bessel zeros; TM010 and TE011 "
               "wall Q; from memory)",
        order=3, section=True,
        sizes={"quick": (1.4 * MM, 1 * MM), "full": (1.4 * MM, 1 * MM, 0.7 * MM)},
        case_text=lambda h: (_pillbox_geometry() + _size(h) + _metal(("side", "bottom", "top"))
                             + "[solve]\nmodes = 4\norder = 3\nazimuthal_orders = [0]\n"),
        compare=compare,
        # measured at 1 mm: 1.6e-11, 1.6e-5, 5.3e-8, 2.2e-4 (the wall Q in the E form, the
        # only one the section solver offers case files, converges like h^3 at order 3:
        # measured 2.8 and 3.1 from 2 to 0.5 mm)
        quantities=(Quantity("f, TM010", 1e-8, 6.0), Quantity("Q wall, TM010", 1e-4, 3.0),
                    Quantity("f, TE011", 3e-7, 6.0), Quantity("Q wall, TE011", 1e-3, 3.0)))


def revolution() -> ReferenceCase:
    """Bodies of revolution m = 0, 1, 2: the complete low spectrum of each order."""
    radius, length = PILLBOX
    orders = (0, 1, 2)

    def compare(result):
        return {"f, lowest 10 over m = 0, 1, 2": _per_order(
            result, lambda m, n: pillbox_order_frequencies(radius, length, m, n), orders)}
    return ReferenceCase(
        name="revolution", title="pillbox on its section, azimuthal orders m = 0, 1, 2",
        covers="axisymmetric solve per azimuthal order, order 2: no missing or spurious mode "
               "near the axis",
        source="Pozar, Microwave Engineering, 4th ed., §6.4 (TM_mnl and TE_mnl from the "
               "zeros of J_m and J_m', scipy.special; from memory)",
        order=2, section=True,
        sizes={"quick": (2 * MM, 1.2 * MM), "full": (2 * MM, 1.2 * MM, 0.8 * MM)},
        case_text=lambda h: (_pillbox_geometry() + _size(h)
                             + "[solve]\nmodes = 10\norder = 2\nazimuthal_orders = [0, 1, 2]\n"),
        compare=compare,
        # measured at 1.2 mm: 5.9e-5
        quantities=(Quantity("f, lowest 10 over m = 0, 1, 2", 3e-4, 4.0),))


def sphere() -> ReferenceCase:
    """PEC sphere from an imported curved section: the complete spectrum for m = 0, 1, 2."""
    radius = 10 * MM
    orders = (0, 1, 2)

    def files(folder: Path, h: float) -> None:
        from .sphere_section import half_disc_msh
        half_disc_msh(folder / "sphere.msh", radius, h)

    def compare(result):
        return {"f, lowest 10 over m = 0, 1, 2": _per_order(
            result, cache(lambda m, n: sphere_order_frequencies(radius, m, n)), orders)}
    return ReferenceCase(
        name="sphere", title="PEC sphere, imported curved (6-node) section, m = 0, 1, 2",
        covers="imported section mesh with curved triangles, E form, order 3",
        source="Harrington, Time-Harmonic Electromagnetic Fields, 1961, §6-11 (zeros of j_n "
               "and (x j_n)' from scipy.special.spherical_jn; from memory)",
        order=3, section=True,
        sizes={"quick": (2.5 * MM, 1.6 * MM), "full": (2.5 * MM, 1.6 * MM, 1 * MM)},
        case_text=lambda h: ('[geometry]\nmesh = "sphere.msh"\n[regions.inside]\neps_r = 1\n'
                             "[solve]\nmodes = 10\norder = 3\nazimuthal_orders = [0, 1, 2]\n"),
        files=files, compare=compare,
        # measured at 1.6 mm: 1.6e-6 (rate 5.7). Expected h^4, not h^6: the 6-node triangles
        # put the arc on parabolas, and that geometric error caps order 3 (from memory)
        quantities=(Quantity("f, lowest 10 over m = 0, 1, 2", 1e-5, 4.0),))


def coax() -> ReferenceCase:
    """Coaxial line shorted at both ends: TEM (m = 0) and TE11-type (m = 1) resonances."""
    outer, inner, length = 10 * MM, 3 * MM, 60 * MM

    def compare(result):
        tem = [m.frequency_hz for m in result.modes if m.m == 0 and m.field_class == "TEM-like"]
        te11 = of_order(result, 1)
        return {"f, TEM p = 1..3": _frequencies(tem[:3], coax_tem_frequencies(length, 3)),
                "f, TE11p p = 1..3": _frequencies(
                    te11[:3], coax_te11p_frequencies(outer, inner, length, 3))}
    return ReferenceCase(
        name="coax", title="shorted coaxial line on its section, m = 0 and 1",
        covers="axisymmetric builder with a metal rod on the axis, order 3, TEM classification",
        source="Pozar, Microwave Engineering, 4th ed., §6.2 (TEM) and §3.5 (coaxial TE11 "
               "cutoff from J1' and Y1', scipy.special and brentq); from memory",
        order=3, section=True,
        sizes={"quick": (2 * MM, 1.4 * MM), "full": (2 * MM, 1.4 * MM, 1 * MM)},
        case_text=lambda h: ('[geometry]\nbuilder = "coax"\nouter_radius = "10 mm"\n'
                             'inner_radius = "3 mm"\nlength = "60 mm"\n' + _size(h)
                             + "[solve]\nmodes = 8\norder = 3\nazimuthal_orders = [0, 1]\n"),
        compare=compare,
        # measured at 1.4 mm: 3.5e-8 and 1.2e-7
        quantities=(Quantity("f, TEM p = 1..3", 1e-6, 6.0),
                    Quantity("f, TE11p p = 1..3", 1e-6, 6.0)))


def slab_box() -> ReferenceCase:
    """Box with a dielectric slab against one side wall: its TE_m0p family."""
    a, b, d = BOX
    thickness, eps = 6 * MM, 4.0

    @cache      # the same for every mesh: computed once
    def family():
        return sorted(f for p in (1, 2, 3)
                      for f in slab_te_m0p_frequencies(a, thickness, d, eps, p, 2))[:3]

    def compare(result):
        return {"f, TE_m0p lowest 3": _frequencies(polarised(result, axis=1)[:3], family())}
    return ReferenceCase(
        name="slab_box", title="box with a dielectric slab (eps_r = 4) against a side wall",
        covers="two-region builder (loaded_box), E form, order 2, modes picked by polarisation",
        source="Pozar, Microwave Engineering, 4th ed., §3.3 (transverse resonance of a "
               "partially loaded guide) and §6.3; brentq; from memory",
        order=2, section=False,
        sizes=SIZES_3D,
        case_text=lambda h: (_box_geometry("loaded_box")
                             + 'block_corner = ["0 mm", "0 mm", "0 mm"]\n'
                             'block_size = ["6 mm", "10.16 mm", "30 mm"]\n' + _size(h)
                             + "[regions.block]\neps_r = 4.0\n[solve]\nmodes = 6\norder = 2\n"),
        compare=compare,
        # measured at 3.5 mm: 2.6e-4
        quantities=(Quantity("f, TE_m0p lowest 3", 1.5e-3, 4.0),))


def periodic_guide() -> ReferenceCase:
    """One cell of a guide loaded with a periodic stack of slabs, at a phase advance of
    120°: the TE10 and TE20 bands there."""
    a = BOX[0]
    layers = ((9.8, 4 * MM), (1.0, 8 * MM))      # the slab, then air, along z
    phase = 2 * math.pi / 3

    @cache
    def bands():
        return [layered_guide_band_frequencies(a, layers, phase, 1, m=m)[0] for m in (1, 2)]

    def compare(result):
        return {"f, TE10 and TE20 bands at 120 deg": _frequencies(lowest(result, 2), bands())}
    return ReferenceCase(
        name="periodic_guide", title="periodic cell of a slab-loaded guide at 120° per cell",
        covers="periodic faces (complex Hermitian solve), builder-made periodic mesh, order 2",
        source="Yeh, Optical Waves in Layered Media, ch. 6 (cos φ = ½ tr T), with Pozar, "
               "Microwave Engineering, 4th ed., §3.3 for the TE_m0 wavenumbers; brentq; "
               "from memory",
        order=2, section=False,
        sizes=SIZES_3D,
        case_text=lambda h: ('[geometry]\nbuilder = "loaded_box"\nwidth = "22.86 mm"\n'
                             'height = "10.16 mm"\nlength = "12 mm"\n'
                             'block_corner = ["0 mm", "0 mm", "4 mm"]\n'
                             'block_size = ["22.86 mm", "10.16 mm", "4 mm"]\n' + _size(h)
                             + "[regions.block]\neps_r = 9.8\n[periodic]\n"
                             'pair = ["z_min", "z_max"]\nphase = "120 deg"\n'
                             "[solve]\nmodes = 3\norder = 2\n"),
        compare=compare,
        # measured at 3.5 mm: 7.0e-4 (rate 3.99 from 5 mm); at 2 mm: 8.8e-5 (rate 4.20)
        quantities=(Quantity("f, TE10 and TE20 bands at 120 deg", 2e-3, 4.0),))


def graded_box() -> ReferenceCase:
    """Box with eps_r = 1.5 + sin(πx/a): its TE_m0p family from 1D shooting."""
    a, b, d = BOX

    @cache      # the shooting takes seconds: once for all meshes
    def family():
        def eps(x):
            return 1.5 + math.sin(math.pi * x / a)
        return sorted(f for p in (1, 2, 3)
                      for f in graded_te_m0p_frequencies(eps, a, d, p, 2, 1.5, 2.5))[:3]

    def compare(result):
        return {"f, TE_m0p lowest 3": _frequencies(polarised(result, axis=1)[:3], family())}
    return ReferenceCase(
        name="graded_box", title="box with a graded permittivity 1.5 + sin(pi x / a)",
        covers="permittivity expression evaluated at quadrature points, E form, order 2",
        source="1D Sturm-Liouville problem by shooting (scipy solve_ivp DOP853 and brentq, "
               "femcav.analytic.graded)",
        order=2, section=False,
        sizes=SIZES_3D,
        case_text=lambda h: (_box_geometry() + _size(h)
                             + '[regions.inside]\neps_r = "1.5 + sin(pi*x/0.02286)"\n'
                             "[solve]\nmodes = 6\norder = 2\n"),
        compare=compare,
        # measured at 3.5 mm: 1.8e-4
        quantities=(Quantity("f, TE_m0p lowest 3", 1e-3, 4.0),))


def two_layer_cylinder() -> ReferenceCase:
    """Pillbox whose lower 8 mm are a dielectric disc (eps_r = 4): its TE_0np modes."""
    radius, length, layer, eps = 10 * MM, 20 * MM, 8 * MM, 4.0

    @cache
    def reference():
        return layered_pillbox_te0np_frequencies(radius, length, layer, eps, 3, 3)

    def compare(result):
        return {"f, TE_0np lowest 3": _frequencies(of_order(result, 0, "TE-like")[:3],
                                                   reference())}
    return ReferenceCase(
        name="two_layer_cylinder", title="pillbox with a full-width dielectric disc (eps_r = 4)",
        covers="composite builder (space and fill cylinders) on its section, m = 0, order 3",
        source="transverse resonance along z with k_c = p'_0n / a (Pozar, Microwave "
               "Engineering, 4th ed., §3.3 and §6.4; brentq; from memory)",
        order=3, section=True,
        sizes={"quick": (2 * MM, 1.4 * MM), "full": (2 * MM, 1.4 * MM, 1 * MM)},
        case_text=lambda h: (
            '[geometry]\nbuilder = "composite"\nbackground = "air"\n'
            '[[geometry.solids]]\nshape = "cylinder"\nbase = ["0 mm", "0 mm", "0 mm"]\n'
            'axis = ["0 mm", "0 mm", "20 mm"]\nradius = "10 mm"\nrole = "space"\n'
            '[[geometry.solids]]\nshape = "cylinder"\nbase = ["0 mm", "0 mm", "0 mm"]\n'
            'axis = ["0 mm", "0 mm", "8 mm"]\nradius = "10 mm"\nrole = "fill"\n'
            'name = "disc"\n' + _size(h) + "[regions.disc]\neps_r = 4.0\n"
            "[solve]\nmodes = 8\norder = 3\nazimuthal_orders = [0]\n"),
        compare=compare,
        # measured at 1.4 mm: 5.4e-6 (the section is graded at the disc's rim, so DOFs grow
        # more slowly than 1/h² and the observed rate comes out high)
        quantities=(Quantity("f, TE_0np lowest 3", 3e-5, 6.0),))


def filled_box() -> ReferenceCase:
    """Box filled with a lossy dielectric: f = f_empty / sqrt(eps_r), Q_d = 1 / tan δ."""
    a, b, d = BOX
    eps, tan_delta = 2.25, 4e-4      # polyethylene, as in Pozar's Example 6.3 (from memory)

    def compare(result):
        modes = sorted(result.modes, key=lambda m: m.frequency_hz)[:3]
        return {
            "f, lowest 3 modes": _frequencies(
                [m.frequency_hz for m in modes], lowest_box_frequencies(a, b, d, 3, eps_r=eps)),
            # filling factor 1: Q_d = 1 / tan δ for every mode (Pozar §6.3, common practice)
            "Q dielectric, 3 modes": Comparison(tuple(m.losses.q_dielectric for m in modes),
                                                (1 / tan_delta,) * 3, unit="1"),
            # the complex eigenvalue of eps_r (1 - j tan δ): Q = 1/tan δ to O(tan² δ)
            "Q from complex solve, 3 modes": Comparison(
                tuple(m.q_dielectric_complex for m in modes), (1 / tan_delta,) * 3, unit="1"),
        }
    return ReferenceCase(
        name="filled_box", title="box filled with a lossy dielectric (eps_r = 2.25, "
                                 "tan delta = 4e-4)",
        covers="dielectric loss by perturbation and by the complex eigen solve, E form, order 2",
        source="Pozar, Microwave Engineering, 4th ed., §6.3 (f / sqrt(eps_r); Q_d = 1/tan "
               "delta when the dielectric fills the cavity); from memory",
        order=2, section=False,
        sizes=SIZES_3D,
        case_text=lambda h: (_box_geometry() + _size(h)
                             + "[regions.inside]\neps_r = 2.25\ntan_delta = 4e-4\n"
                             "[solve]\nmodes = 3\norder = 2\ncomplex_check = true\n"),
        compare=compare,
        # measured at 3.5 mm: 1.6e-4, 0 and 4.0e-8
        quantities=(Quantity("f, lowest 3 modes", 1e-3, 4.0),
                    Quantity("Q dielectric, 3 modes", 1e-9, None),
                    Quantity("Q from complex solve, 3 modes", 1e-6, None)))


def uniaxial_cylinder() -> ReferenceCase:
    """Pillbox filled with a uniaxial crystal (axis along z) on its section, m = 0 and 1:
    frequencies, and the dielectric Q of the modes whose field lies along one direction."""
    radius, length = PILLBOX
    perpendicular, parallel = 9.27, 11.34     # sapphire near 4 K (Krupka et al. 1999, memory)
    tangents = (2e-4, 5e-4)                   # made up, one per direction

    def modes_of(m, count):
        return uniaxial_pillbox_modes(radius, length, m, count, perpendicular, parallel)

    def compare(result):
        out = {"f, lowest 8 over m = 0, 1": _per_order(
            result, lambda m, n: [f for f, _ in modes_of(m, n)], (0, 1))}
        # TM010: E along z only (Q_d = 1/tan δ∥); TE011: E along φ only (1/tan δ⊥)
        for name, tangent in (("TM010", tangents[1]), ("TE011", tangents[0])):
            expected = next(f for f, n in modes_of(0, 8) if n == name)
            mode = mode_of_order(result, 0, "TM-like" if name[1] == "M" else "TE-like",
                                 expected)
            out[f"Q dielectric, {name}"] = Comparison(
                () if mode is None else (mode.losses.q_dielectric,), (1 / tangent,), unit="1")
        return out
    return ReferenceCase(
        name="uniaxial_cylinder", title="pillbox filled with a uniaxial crystal (axis z) on "
                                        "its section, m = 0, 1",
        covers="uniaxial permittivity on the section, E form, order 3; dielectric Q per "
               "direction",
        source="TE to z: k0^2 eps_perp = kt^2 + kz^2; TM to z: k0^2 = kt^2/eps_par + "
               "kz^2/eps_perp (Chew, Waves and Fields in Inhomogeneous Media, ch. 1; Pozar "
               "§6.4 for the Bessel zeros; from memory)",
        order=3, section=True,
        sizes={"quick": (2 * MM, 1.4 * MM), "full": (2 * MM, 1.4 * MM, 1 * MM)},
        case_text=lambda h: (
            _pillbox_geometry() + _size(h)
            + f"[regions.inside]\neps_r = {{perpendicular = {perpendicular}, parallel = "
              f"{parallel}, axis = [0, 0, 1]}}\ntan_delta = {{perpendicular = {tangents[0]}, "
              f"parallel = {tangents[1]}}}\n"
            + "[solve]\nmodes = 8\norder = 3\nazimuthal_orders = [0, 1]\n"),
        compare=compare,
        # measured at 1.4 mm: 3.5e-7 (rate 6.65), 2.2e-10, 0; at 1 mm 5.3e-8 (rate 6.14)
        quantities=(Quantity("f, lowest 8 over m = 0, 1", 2e-6, 6.0),
                    Quantity("Q dielectric, TM010", 1e-8, None),
                    Quantity("Q dielectric, TE011", 1e-8, None)))



def open_sphere() -> ReferenceCase:
    """Dielectric sphere in free space (an open resonator): the magnetic-dipole mode's
    complex frequency, its f and radiation Q."""
    radius, eps_r = 10 * MM, 36.0
    exact = dielectric_sphere_resonance(radius, eps_r, "TE")

    def compare(result):
        mode = min(result.modes, key=lambda m: abs(m.frequency_hz - exact.real), default=None)
        found = lambda value: () if mode is None else (value(mode),)
        return {"f, TE1": _frequencies(found(lambda m: m.frequency_hz), (exact.real,)),
                "Q rad, TE1": Comparison(found(lambda m: m.q_radiation),
                                         (exact.real / (2 * exact.imag),), unit="1")}
    return ReferenceCase(
        name="open_sphere", title="dielectric sphere (eps_r 36) in free space, 1/8 model",
        covers="open problem: absorbing layer, complex-symmetric solve, radiation Q; curved "
               "tetrahedra, E form, order 2",
        source="Stratton, Electromagnetic Theory, 1941, §9.22-9.25; Gastine, Courtois and "
               "Dormann, IEEE T-MTT 15(12), 1967 (complex roots with scipy.special and "
               "scipy.optimize.root)",
        order=2, section=False,
        sizes={"quick": (10 * MM, 8 * MM), "full": (10 * MM, 8 * MM, 6 * MM)},
        case_text=lambda h: (
            '[geometry]\nbuilder = "sphere"\nradius = "10 mm"\n'
            '[open]\nclearance = "20 mm"\nthickness = "20 mm"\n'
            + _size(h) + "curved = true\n"
            + f'[regions.sphere]\neps_r = 36\nmesh_size = "{0.375 * h / MM:.6g} mm"\n'
            '[symmetry]\nx = "pec"\ny = "pec"\nz = "pmc"\n'
            f'[solve]\nmodes = 3\norder = 2\nnear = "{exact.real / 1e9:.6g} GHz"\n'),
        compare=compare,
        # measured at 8 mm: 5.3e-4 and 1.7e-3. No rate: below a few 1e-3 in Q the layer (its
        # reflection and its own mesh), not the sphere's elements, sets the error
        # (benchmarks/open_sphere.py)
        quantities=(Quantity("f, TE1", 3e-3, None), Quantity("Q rad, TE1", 2e-2, None)))


CASES = (box, pillbox_3d, pillbox, revolution, sphere, coax, slab_box, graded_box,
         two_layer_cylinder, filled_box, periodic_guide, uniaxial_cylinder, open_sphere)


def catalogue() -> list[ReferenceCase]:
    return [make() for make in CASES]
