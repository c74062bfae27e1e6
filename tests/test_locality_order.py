"""The reader renumbers a mesh for locality (reverse Cuthill-McKee on the vertex graph): the
mesh stays the same mesh, its numbering gets a small bandwidth, and the modes do not move."""

import numpy as np
from conftest import sorted_rows

from femcav.analytic.box import lowest_box_frequencies
from femcav.geometry import build_part, read_mesh
from femcav.geometry.mesh import TaggedMesh
from femcav.io.mesh_files import write_msh
from femcav.materials import Material
from femcav.model import make_model
from femcav.solver import solve_model

A, B, D = 0.02286, 0.01016, 0.030


def edge_bandwidth(mesh: TaggedMesh) -> int:
    t = mesh.tets
    return int(np.abs(t[:, [0, 0, 0, 1, 1, 2]] - t[:, [1, 2, 3, 2, 3, 3]]).max())


def shuffled(mesh: TaggedMesh, seed: int = 7) -> TaggedMesh:
    """The same mesh with its vertices and tetrahedra in random order."""
    rng = np.random.default_rng(seed)
    n = mesh.points.shape[0]
    order = rng.permutation(n)            # new vertex i is old vertex order[i]
    renumber = np.empty(n, dtype=np.int64)
    renumber[order] = np.arange(n)
    along = rng.permutation(mesh.n_tets)
    return TaggedMesh(points=mesh.points[order], tets=renumber[mesh.tets][along],
                      tet_region=mesh.tet_region[along], region_names=mesh.region_names,
                      faces=renumber[mesh.faces], face_tag=mesh.face_tag,
                      wall_names=mesh.wall_names)


def test_a_shuffled_file_is_read_back_with_a_small_bandwidth_and_the_same_modes(tmp_path):
    built = build_part("box", width=A, height=B, length=D, mesh_size=2.5e-3)
    write_msh(shuffled(built), tmp_path / "shuffled.msh")
    back = read_mesh(tmp_path / "shuffled.msh")

    assert np.allclose(sorted_rows(back.points), sorted_rows(built.points), rtol=0, atol=1e-15)
    assert back.n_tets == built.n_tets
    assert np.isclose(np.abs(back.tet_volumes()).sum(), A * B * D, rtol=1e-12)
    # Cuthill-McKee orders vertices level by level, so the bandwidth is about two levels of
    # the vertex graph; a level of a 3D mesh of n vertices has about n^(2/3) (common practice)
    n = back.points.shape[0]
    assert edge_bandwidth(shuffled(built)) > 0.9 * n
    assert edge_bandwidth(back) < 3 * n ** (2 / 3)
    # the tetrahedra follow the vertex order
    assert np.all(np.diff(back.tets.min(axis=1)) >= 0)

    inside = {"inside": Material()}
    first = solve_model(make_model(built, inside, {}), modes=4)
    second = solve_model(make_model(back, inside, {}), modes=4)
    f1 = np.array([m.frequency_hz for m in first.modes])
    f2 = np.array([m.frequency_hz for m in second.modes])
    assert second.passed
    assert np.allclose(f2, f1, rtol=1e-10)          # the same discrete problem
    # and the right one: rectangular-cavity formula, Pozar, Microwave Engineering, 4th ed.,
    # §6.3 (from memory); order 1 on this mesh is within a few per cent
    assert np.allclose(f2, lowest_box_frequencies(A, B, D, 4), rtol=0.05)


def test_curved_nodes_follow_their_corners():
    mesh = build_part("pillbox", radius=0.01, length=0.015, mesh_size=3e-3, curved=True)
    assert mesh.tets10 is not None
    p = mesh.points
    corners = mesh.tets10[:, :4]
    assert np.array_equal(corners, mesh.tets)
    for k, (a, b) in enumerate(((0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3))):
        middle = (p[mesh.tets10[:, a]] + p[mesh.tets10[:, b]]) / 2
        length = np.linalg.norm(p[mesh.tets10[:, a]] - p[mesh.tets10[:, b]], axis=1)
        # a midside node sits near the middle of its straight edge (on a curved wall it is
        # moved onto the surface, by much less than the edge length)
        assert np.all(np.linalg.norm(p[mesh.tets10[:, 4 + k]] - middle, axis=1) < 0.25 * length)
    n_corners = int(mesh.tets.max()) + 1
    assert edge_bandwidth(mesh) < 3 * n_corners ** (2 / 3)
