"""Periodic cells (Floquet pairs): the fields on one face are those on its translate times
e^{-jφ}, solved as a complex Hermitian problem.

References: the TE10 band of an empty rectangular guide, ω² = c²((π/a)² + (φ/L)²) (D. M.
Pozar, Microwave Engineering, 4th ed., §3.3, with the Floquet theorem: a mode of the chain
advances by φ = βL per cell); the empty-lattice bands of a cubic cell, k = |φ + 2πn| / a,
two polarisations each (C. Kittel, Introduction to Solid State Physics, 8th ed., ch. 7,
empty lattice; from memory); the TE10 band of a guide loaded with a periodic stack of two
layers, cos φ = ½ tr T (P. Yeh, Optical Waves in Layered Media, ch. 6), computed here; the
0 and π modes of a symmetric cell are the half-cell modes with PEC or PMC at both cut planes
(common practice); the TM bands of a square lattice of dielectric rods from a plane-wave
expansion computed here, and its gap edges (J. D. Joannopoulos et al., Photonic Crystals,
2nd ed., 2008, ch. 5, from memory).
"""

import itertools
from dataclasses import replace

import numpy as np
import pytest
from scipy.constants import c as C0
from scipy.optimize import brentq
from skfem import MeshTet

from femcav.errors import InputError
from femcav.geometry.mesh import TaggedMesh
from femcav.materials import Material
from femcav.model import PeriodicPair, make_model
from femcav.solver import solve_model
from femcav.walls import Wall

FACES = ("x_min", "x_max", "y_min", "y_max", "z_min", "z_max")


def tagged_box(size, divisions, *, z_planes=None, region_of_z=None, seed=None) -> TaggedMesh:
    """A tensor box mesh (six tetrahedra per brick) with its six faces named; ``z_planes``
    replaces the even z spacing, ``region_of_z`` names each tetrahedron's region from its
    centre's z; ``seed`` shuffles the vertex numbers, so that partner edges and triangles
    are numbered in other orders on the two faces."""
    a, b, L = size
    z = np.linspace(0, L, divisions[2] + 1) if z_planes is None else np.asarray(z_planes)
    mesh = MeshTet.init_tensor(np.linspace(0, a, divisions[0] + 1),
                               np.linspace(0, b, divisions[1] + 1), z)
    boundary = mesh.boundary_facets()
    centre = mesh.p[:, mesh.facets[:, boundary]].mean(axis=1)
    tags = np.zeros(boundary.size, int)
    for i, (axis, value) in enumerate([(0, 0), (0, a), (1, 0), (1, b), (2, 0), (2, L)]):
        tags[np.isclose(centre[axis], value)] = i + 1
    regions = {"inside": 1}
    tet_region = np.ones(mesh.t.shape[1], int)
    if region_of_z is not None:
        names = [region_of_z(zc) for zc in mesh.p[2, mesh.t].mean(axis=0)]
        regions = {n: i + 1 for i, n in enumerate(dict.fromkeys(names))}
        tet_region = np.array([regions[n] for n in names])
    tm = TaggedMesh(points=mesh.p.T, tets=mesh.t.T, tet_region=tet_region, region_names=regions,
                    faces=mesh.facets[:, boundary].T, face_tag=tags,
                    wall_names={n: i + 1 for i, n in enumerate(FACES)})
    if seed is None:
        return tm
    order = np.random.default_rng(seed).permutation(len(tm.points))
    new_index = np.argsort(order)
    return replace(tm, points=tm.points[order], tets=new_index[tm.tets],
                   faces=new_index[tm.faces])


def mirrored_in_z(half: TaggedMesh) -> TaggedMesh:
    """``half`` (0 <= z <= h) and its mirror image in z = h, joined: a cell of length 2h whose
    mesh is symmetric; z_max of the half becomes the middle plane, the mirror of z_min the
    new z_max."""
    h = half.points[:, 2].max()
    mirror = half.points * [1, 1, -1] + [0, 0, 2 * h]
    on_plane = np.isclose(half.points[:, 2], h)
    # mirror vertices on the middle plane are the half's own
    new_index = np.where(on_plane, np.arange(len(mirror)),
                         len(mirror) + np.cumsum(~on_plane) - 1)
    points = np.vstack([half.points, mirror[~on_plane]])
    ids = half.wall_names
    keep = half.face_tag != ids["z_max"]
    mirror_tag = np.where(half.face_tag[keep] == ids["z_min"], ids["z_max"], half.face_tag[keep])
    return replace(half, points=points, tets=np.vstack([half.tets, new_index[half.tets]]),
                   tet_region=np.concatenate([half.tet_region, half.tet_region]),
                   faces=np.vstack([half.faces[keep], new_index[half.faces[keep]]]),
                   face_tag=np.concatenate([half.face_tag[keep], mirror_tag]))


def frequencies(mesh, pairs, *, order, modes, materials=None, walls=None, method="direct"):
    model = make_model(mesh, materials or {"inside": Material()}, walls or {},
                       periodic=tuple(pairs))
    result = solve_model(model, modes=modes, order=order, method=method)
    assert all(m.checks.passed for m in result.modes)
    return np.array([m.frequency_hz for m in result.modes]), result


A, B, L = 0.020, 0.010, 0.010


@pytest.mark.parametrize("order, tolerance", [(2, 3e-3), (3, 2e-4)])
def test_empty_guide_cell_follows_the_te10_band(order, tolerance):
    mesh = tagged_box((A, B, L), (3, 2, 2), seed=5)
    for degrees in (0, 60, 120, 180):
        phase = np.radians(degrees)
        f, result = frequencies(mesh, [PeriodicPair("z_min", "z_max", phase)], order=order,
                                modes=2)
        # Pozar §3.3: β10² = k² - (π/a)², and β10 = φ/L on the cell's chain
        reference = C0 / (2 * np.pi) * np.hypot(np.pi / A, phase / L)
        assert f[0] == pytest.approx(reference, rel=tolerance)
        assert result.static_fields_dropped == 0     # a PEC guide has no constant field
        if degrees == 180:   # the forward and backward waves meet: a degenerate pair
            assert f[1] == pytest.approx(f[0], rel=1e-9)


@pytest.mark.parametrize("method, cases", [
    ("direct", ((0.5, 1.0, 2.0), (np.pi, 0.0, 0.7), (0.0, 0.0, 0.0))),
    ("iterative", ((0.5, 1.0, 2.0),))])
def test_cubic_lattice_cell_gives_the_empty_lattice_bands(method, cases):
    a = 0.010
    mesh = tagged_box((a, a, a), (2, 2, 2), seed=9)
    for phases in cases:
        pairs = [PeriodicPair(f"{x}_min", f"{x}_max", p) for x, p in zip("xyz", phases)]
        f, result = frequencies(mesh, pairs, order=3, modes=4, method=method)
        # Kittel ch. 7 (empty lattice): k = |φ + 2πn| / a, two polarisations per k
        ks = sorted(np.linalg.norm((np.array(phases) + 2 * np.pi * np.array(n)) / a)
                    for n in itertools.product(range(-1, 2), repeat=3))
        ks = [k for k in ks if k > 1e-9 for _ in range(2)]
        reference = C0 / (2 * np.pi) * np.array(ks[:4])
        assert f == pytest.approx(reference, rel=5e-3)
        # at phase 0 the three constant fields of the cell are static, and dropped
        assert result.static_fields_dropped == (3 if not any(phases) else 0)


def test_layer_stack_follows_the_transfer_matrix_band():
    eps, d1, d2 = 4.0, 0.004, 0.008
    cell = d1 + d2
    mesh = tagged_box((A, B, cell), (3, 2, 6), z_planes=np.linspace(0, cell, 7),
                      region_of_z=lambda z: "layer" if z < d1 else "inside")
    kc = np.pi / A

    def mismatch(f, phase):
        # Yeh ch. 6: cos φ = ½ tr(T1 T2) = cos β1d1 cos β2d2 - ½(β1/β2 + β2/β1) sin β1d1 sin β2d2,
        # with the TE10 wavenumbers βi² = εi k0² - (π/a)² (Pozar §3.3) in each layer
        k0 = 2 * np.pi * f / C0
        b1, b2 = np.sqrt(complex(eps * k0**2 - kc**2)), np.sqrt(complex(k0**2 - kc**2))
        half_trace = (np.cos(b1 * d1) * np.cos(b2 * d2)
                      - 0.5 * (b1 / b2 + b2 / b1) * np.sin(b1 * d1) * np.sin(b2 * d2))
        return half_trace.real - np.cos(phase)

    materials = {"inside": Material(), "layer": Material(eps_r=eps)}
    for degrees in (0, 90, 180):
        phase = np.radians(degrees)
        f, _ = frequencies(mesh, [PeriodicPair("z_min", "z_max", phase)], order=2, modes=1,
                           materials=materials)
        exact = brentq(mismatch, 0.9 * f[0], 1.1 * f[0], args=(phase,))
        assert f[0] == pytest.approx(exact, rel=3e-3)
    # the lowest gap of the TE10 bands: at φ = π its two edges are the first two roots
    grid = np.linspace(5e9, 20e9, 600)
    values = np.array([mismatch(f, np.pi) for f in grid])
    # at φ = π the condition touches zero from above at a gap edge only when there is no
    # gap; here ½ tr T crosses -1, so each edge is a sign change
    edges = [brentq(mismatch, grid[i], grid[i + 1], args=(np.pi,))
             for i in np.flatnonzero(np.sign(values[:-1]) != np.sign(values[1:]))[:2]]
    assert len(edges) == 2 and edges[1] > 1.02 * edges[0]          # a real gap
    f, _ = frequencies(mesh, [PeriodicPair("z_min", "z_max", np.pi)], order=2, modes=6,
                       materials=materials)
    for edge in edges:    # other guide modes (with y variation) may lie between
        assert np.min(np.abs(f / edge - 1)) < 3e-3


def test_zero_and_pi_of_a_symmetric_cell_are_the_half_cell_solves():
    # a dielectric slab in the middle of the cell: symmetric about z = L/2
    slab = lambda z: "slab" if abs(z - L / 2) < L / 4 else "inside"
    materials = {"inside": Material(), "slab": Material(eps_r=3.0)}
    half = tagged_box((A, B, L / 2), (3, 2, 2), region_of_z=slab)
    full = mirrored_in_z(half)      # a mesh as symmetric as the cell
    spectra = {}
    for degrees in (0, 180):
        f, _ = frequencies(full, [PeriodicPair("z_min", "z_max", np.radians(degrees))],
                           order=2, modes=4, materials=materials)
        spectra[degrees] = f
    cut = {}
    for ends in (("pec", "pec"), ("pmc", "pmc"), ("pec", "pmc"), ("pmc", "pec")):
        walls = {"z_min": Wall(ends[0]), "z_max": Wall(ends[1])}
        cut[ends] = frequencies(half, [], order=2, modes=4, materials=materials,
                                walls=walls)[0]
    # common practice: the 0-mode is even or odd about both planes, the π-mode even about one
    # and odd about the other
    zero = np.sort(np.concatenate([cut["pec", "pec"], cut["pmc", "pmc"]]))[:4]
    pi = np.sort(np.concatenate([cut["pec", "pmc"], cut["pmc", "pec"]]))[:4]
    assert spectra[0] == pytest.approx(zero, rel=1e-8)
    assert spectra[180] == pytest.approx(pi, rel=1e-8)


def test_faces_meshed_differently_are_refused_with_the_place():
    mesh = tagged_box((A, B, L), (3, 2, 2))
    points = mesh.points.copy()
    on_far_face = np.flatnonzero(np.isclose(points[:, 2], L) & (points[:, 0] > 0)
                                 & (points[:, 0] < A) & (points[:, 1] > 0) & (points[:, 1] < B))
    points[on_far_face[0], 0] += 0.1 * A / 3        # one vertex of z_max moved in its plane
    model = make_model(replace(mesh, points=points), {"inside": Material()}, {},
                       periodic=(PeriodicPair("z_min", "z_max", 1.0),))
    with pytest.raises(InputError, match="not meshed alike.*'z_max'.*'z_min'") as caught:
        solve_model(model, modes=2)
    assert caught.value.field == "periodic.pair" and " mm" in str(caught.value)


def test_a_missing_surface_is_refused():
    mesh = tagged_box((A, B, L), (3, 2, 2))
    with pytest.raises(InputError, match="no surface named 'z_top'"):
        make_model(mesh, {"inside": Material()}, {},
                   periodic=(PeriodicPair("z_min", "z_top", 1.0),))


@pytest.mark.parametrize("form", ["E", "H"])
def test_energy_velocity_of_the_te10_band_is_its_group_velocity(form):
    from femcav.post.group_velocity import energy_velocity

    mesh = tagged_box((A, B, L), (3, 2, 2))
    for degrees in (30, 150):
        phase = np.radians(degrees)
        model = make_model(mesh, {"inside": Material()}, {},
                           periodic=(PeriodicPair("z_min", "z_max", phase),))
        result = solve_model(model, modes=1, order=3, form=form)
        mode = result.modes[0]
        omega = 2 * np.pi * mode.frequency_hz
        # Pozar §3.3: v_g = dω/dβ = c² β / ω, β = φ / L
        assert energy_velocity(result.space, mode.dofs, omega, (0, 0, 1)) == pytest.approx(
            C0**2 * (phase / L) / omega, rel=1e-4)


def plane_wave_tm_bands(kx, ky, eps_rod, r, n=12, bands=2):
    """ωa/2πc of the TM (E along the rods) bands of a square lattice (a = 1) of round rods
    in air, by plane-wave expansion: |k+G|² E_G = (ω/c)² Σ ε(G - G') E_G', with the Fourier
    coefficients of a round rod ε(G) = f (ε_rod - 1) 2 J1(|G| r) / (|G| r) (the plane-wave
    method of J. D. Joannopoulos et al., Photonic Crystals, 2nd ed., 2008, from memory);
    (2n+1)² waves: 625 give the bands to about 1e-5."""
    from scipy.linalg import eigh
    from scipy.special import j1

    m = np.arange(-n, n + 1)
    gx, gy = (g.ravel() * 2 * np.pi for g in np.meshgrid(m, m, indexing="ij"))
    q = np.hypot(gx[:, None] - gx[None, :], gy[:, None] - gy[None, :])
    fill = np.pi * r**2
    with np.errstate(invalid="ignore", divide="ignore"):
        shape = np.where(q > 0, 2 * fill * j1(q * r) / (q * r), fill)
    eps = np.where(q > 0, 0.0, 1.0) + (eps_rod - 1) * shape
    k_squared = eigh(np.diag((kx + gx) ** 2 + (ky + gy) ** 2), eps, eigvals_only=True)
    return np.sqrt(k_squared[:bands]) / (2 * np.pi)


def test_square_lattice_of_rods_has_the_tm_gap():
    # a 2D crystal as a 3D cell one slab thick, PEC above and below: E along the rods (TM)
    # is uniform in z and meets both walls at right angles, so the cell's lowest modes are
    # the crystal's TM bands; the gap runs from band 1 at M to band 2 at X (0.322 to 0.443
    # in ωa/2πc for ε 8.9, r = 0.2a: Joannopoulos et al., ch. 5, from memory)
    from femcav.geometry._faces import box_face_namer
    from femcav.geometry.parts import Layout, Sizing, mesh_layout
    from femcav.geometry.solids import Box, Cylinder

    a, thickness, eps = 0.010, 0.0025, 8.9
    size = (a, a, thickness)
    layout = Layout(space=[Box((0, 0, 0), size)], background="air",
                    fills=[("rod", Cylinder((a / 2, a / 2, 0), (0, 0, thickness), 0.2 * a))],
                    outer_wall=box_face_namer(size, 1e-7 * a))
    mesh = mesh_layout(layout, Sizing(size=0.0015, curved=True,
                                      periodic_faces=(("x_min", "x_max"), ("y_min", "y_max"))))
    materials = {"air": Material(), "rod": Material(eps_r=eps)}
    edges = {}
    for point, (kx, ky) in {"X": (np.pi, 0.0), "M": (np.pi, np.pi)}.items():
        pairs = [PeriodicPair("x_min", "x_max", kx), PeriodicPair("y_min", "y_max", ky)]
        f, _ = frequencies(mesh, pairs, order=2, modes=2, materials=materials)
        normalised = f * a / C0
        assert normalised == pytest.approx(plane_wave_tm_bands(kx, ky, eps, 0.2), rel=1e-3)
        edges[point] = normalised
    assert edges["M"][0] == pytest.approx(0.322, abs=2e-3)
    assert edges["X"][1] == pytest.approx(0.443, abs=2e-3)


def test_layer_band_reference_meets_the_closed_forms():
    from femcav.analytic.layered_guide import layered_guide_band_frequencies

    a = 0.02286
    # two layers of one material: the empty guide's TE10 and TE20 bands (Pozar §3.3)
    for phase in (0.3, 2.0):
        for m in (1, 2):
            (f,) = layered_guide_band_frequencies(a, [(2.0, 0.004), (2.0, 0.006)], phase, 1, m=m)
            assert f == pytest.approx(C0 / (2 * np.pi * np.sqrt(2.0))
                                      * np.hypot(m * np.pi / a, phase / 0.010), rel=1e-9)
    # two different layers: Yeh's two-layer form of cos φ = ½ tr T (ch. 6), written out here
    eps, d1, d2, phase = 9.8, 0.004, 0.008, 2 * np.pi / 3
    f = layered_guide_band_frequencies(a, [(eps, d1), (1.0, d2)], phase, 2)
    for root in f:
        k0 = 2 * np.pi * root / C0
        b1 = np.sqrt(complex(eps * k0**2 - (np.pi / a) ** 2))
        b2 = np.sqrt(complex(k0**2 - (np.pi / a) ** 2))
        half_trace = (np.cos(b1 * d1) * np.cos(b2 * d2)
                      - 0.5 * (b1 / b2 + b2 / b1) * np.sin(b1 * d1) * np.sin(b2 * d2))
        assert half_trace.real == pytest.approx(np.cos(phase), abs=1e-9)
    assert f[1] > 2 * f[0]


def test_wall_loss_of_a_travelling_wave_gives_the_guide_attenuation():
    # a copper WR-90 cell: Q = ωW/P per cell and v_g give α = ω / (2 Q v_g) (power falls
    # as e^{-2αz}), against the TE10 attenuation α_c = R_s (2bπ² + a³k²) / (a³ b β k η)
    # (Pozar §3.3, eq. 3.96; from memory)
    from scipy.constants import epsilon_0, mu_0

    from femcav.post.group_velocity import energy_velocity

    a, b, length, sigma, phase = 0.02286, 0.01016, 0.010, 5.8e7, np.pi / 3
    walls = {w: Wall("metal", conductivity=sigma) for w in ("x_min", "x_max", "y_min", "y_max")}
    model = make_model(tagged_box((a, b, length), (4, 2, 2)), {"inside": Material()}, walls,
                       periodic=(PeriodicPair("z_min", "z_max", phase),))
    result = solve_model(model, modes=1, order=3, form="H")
    mode = result.modes[0]
    omega = 2 * np.pi * mode.frequency_hz
    alpha = omega / (2 * mode.losses.q_wall
                     * energy_velocity(result.space, mode.dofs, omega, (0, 0, 1)))
    k, beta = omega / C0, phase / length
    rs, eta = np.sqrt(omega * mu_0 / (2 * sigma)), np.sqrt(mu_0 / epsilon_0)
    assert alpha == pytest.approx(rs * (2 * b * np.pi**2 + a**3 * k**2)
                                  / (a**3 * b * beta * k * eta), rel=1e-3)
