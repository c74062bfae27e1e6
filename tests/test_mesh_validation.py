"""A broken imported mesh is refused on the command line: exit status 2, one line naming the
mesh file, the problem and where it is, no traceback and no output folder."""

import itertools
import json
import math
import re
from pathlib import Path

import meshio
import numpy as np
import pytest

from femcav.cli import main

MM = 1e-3
ONE_REGION = '[regions.inside]\neps_r = 1\n'


def grid_box(cells: tuple[int, int, int], step: float = 5.0, origin=(0.0, 0.0, 0.0)):
    """Points and positively oriented tetrahedra filling a box of ``cells`` cubes of side
    ``step``: each cube is cut into 6 tetrahedra along its main diagonal, one per order of the
    axes (Kuhn's subdivision, from memory); neighbouring cubes then share whole faces."""
    nx, ny, nz = cells
    grid = np.stack(np.meshgrid(*(np.arange(n + 1) for n in cells), indexing="ij"), axis=-1)
    points = grid.reshape(-1, 3) * step + np.asarray(origin)
    index = np.arange(points.shape[0]).reshape(nx + 1, ny + 1, nz + 1)
    tets = []
    for corner in itertools.product(range(nx), range(ny), range(nz)):
        for axes in itertools.permutations(range(3)):
            path = [np.array(corner)]
            for axis in axes:
                path.append(path[-1] + np.eye(3, dtype=int)[axis])
            tets.append([index[tuple(v)] for v in path])
    tets = np.array(tets)
    flip = signed_volumes(points, tets) < 0
    tets[flip] = tets[flip][:, [1, 0, 2, 3]]
    return points, tets


def signed_volumes(points, tets):
    # det[p1 - p0, p2 - p0, p3 - p0] / 6 (common practice).
    p = points[tets]
    return np.linalg.det(np.stack([p[:, 1] - p[:, 0], p[:, 2] - p[:, 0], p[:, 3] - p[:, 0]],
                                  axis=1)) / 6


def write_msh(path: Path, points, blocks, names) -> Path:
    """gmsh 2.2 file; blocks are (cell type, cells, physical tag per cell), names
    name -> (tag, dimension)."""
    cells = [(kind, np.asarray(data)) for kind, data, _ in blocks]
    tags = [np.asarray(t, dtype=int) for _, _, t in blocks]
    mesh = meshio.Mesh(points, cells, cell_data={"gmsh:physical": tags, "gmsh:geometrical": tags},
                       field_data={name: np.array(spec) for name, spec in names.items()})
    meshio.write(path, mesh, file_format="gmsh22", binary=False)
    return path


def one_region(path: Path, points, tets) -> Path:
    return write_msh(path, points, [("tetra", tets, np.ones(len(tets)))], {"inside": (1, 3)})


def write_case(folder: Path, regions: str = ONE_REGION, extra: str = "") -> Path:
    case = folder / "case.toml"
    case.write_text(f'[geometry]\nmesh = "part.msh"\nmesh_unit = "mm"\n{regions}{extra}'
                    '[solve]\nmodes = 1\n')
    return case


def refused(folder: Path, capsys, **case) -> str:
    """Run the case, check the promises every refused input keeps, return the message."""
    path = write_case(folder, **case)
    assert main(["solve", str(path), "-q"]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert not (folder / "case-results").exists()
    return err


def mesh_refused(folder: Path, capsys, **case) -> str:
    err = refused(folder, capsys, **case)
    assert err.startswith(f"femcav: error: {folder / 'part.msh'}: ")
    return err


def points_in(message: str) -> list[np.ndarray]:
    return [np.array([float(v) for v in m.split(",")])
            for m in re.findall(r"\(x, y, z\) = \(([^)]*)\) mm", message)]


def test_flat_tetrahedra(tmp_path, capsys):
    points, tets = grid_box((2, 2, 2))
    # Glue two flat tetrahedra onto the z = 0 wall: three corners of a boundary triangle and
    # its centroid, all four in one plane (zero volume).
    bottom = [t for t in tets if np.sum(points[t, 2] == 0) == 3][:2]
    caps = []
    for tet in bottom:
        tri = [v for v in tet if points[v, 2] == 0]
        points = np.vstack([points, points[tri].mean(axis=0)])
        caps.append(tri + [len(points) - 1])
    tets = np.vstack([tets, caps])
    one_region(tmp_path / "part.msh", points, tets)
    err = mesh_refused(tmp_path, capsys)
    assert f"2 of {len(tets)} tetrahedra (in region 'inside') have (almost) zero volume" in err
    # The centroid of a flat cap is the centroid of its triangle (common practice).
    (where,) = points_in(err)
    assert where == pytest.approx(points[caps[0][:3]].mean(axis=0), abs=1e-3)


def test_inverted_tetrahedra(tmp_path, capsys):
    points, tets = grid_box((3, 3, 3))
    # Swapping two vertices reverses the sign of the volume (common practice).
    tets[[10, 50, 90]] = tets[[10, 50, 90]][:, [1, 0, 2, 3]]
    one_region(tmp_path / "part.msh", points, tets)
    err = mesh_refused(tmp_path, capsys)
    assert f"3 of {len(tets)} tetrahedra (in region 'inside') are inverted" in err
    assert f"opposite to the other {len(tets) - 3}" in err
    (where,) = points_in(err)
    assert where == pytest.approx(points[tets[10]].mean(axis=0), abs=1e-3)


def test_consistent_negative_orientation_solves(tmp_path, capsys):
    points, tets = grid_box((4, 2, 5))
    frequencies = []
    for order, sign in (([0, 1, 2, 3], 1), ([1, 0, 2, 3], -1)):
        folder = tmp_path / f"sign{sign}"
        folder.mkdir()
        one_region(folder / "part.msh", points, tets[:, order])
        assert np.all(np.sign(signed_volumes(points, tets[:, order])) == sign)
        assert main(["solve", str(write_case(folder)), "-q", "--no-report"]) == 0
        modes = json.loads((folder / "case-results" / "modes.json").read_text())["modes"]
        frequencies.append(modes[0]["frequency_hz"])
    # Vertex order is a convention: the same mesh either way round gives the same mode.
    assert frequencies[1] == pytest.approx(frequencies[0], rel=1e-9)
    # TE101 of a 20 x 10 x 25 mm box, (c/2) sqrt(1/a² + 1/d²) (Pozar §6.3); very coarse mesh.
    exact = 299792458 / 2 * math.hypot(1 / (20 * MM), 1 / (25 * MM))
    assert frequencies[0] == pytest.approx(exact, rel=0.03)


def test_tetrahedra_without_region(tmp_path, capsys):
    points, tets = grid_box((2, 2, 2))
    tags = np.where(points[tets].mean(axis=1)[:, 0] < 5.0, 0, 1)
    write_msh(tmp_path / "part.msh", points, [("tetra", tets, tags)], {"inside": (1, 3)})
    err = mesh_refused(tmp_path, capsys)
    assert (f"{np.sum(tags == 0)} of {len(tets)} tetrahedra belong to no region (tag 0, in no "
            "physical volume group) while the others are in 'inside'") in err
    (where,) = points_in(err)
    assert where[0] < 5.0


def test_mesh_without_any_tags_is_one_region(tmp_path, capsys):
    points, tets = grid_box((4, 2, 5))
    meshio.write(tmp_path / "part.vtu", meshio.Mesh(points, [("tetra", tets)]))
    case = tmp_path / "case.toml"
    case.write_text('[geometry]\nmesh = "part.vtu"\nmesh_unit = "mm"\n'
                    '[regions.region0]\neps_r = 1\n[solve]\nmodes = 1\n')
    assert main(["solve", str(case), "-q", "--no-report"]) == 0
    document = json.loads((tmp_path / "case-results" / "modes.json").read_text())
    # the untagged grid is the 20 x 10 x 25 mm box: TE101 at (c/2) sqrt(1/a² + 1/d²)
    # (Pozar §6.3), very coarse mesh
    exact = 299792458 / 2 * math.hypot(1 / (20 * MM), 1 / (25 * MM))
    assert document["modes"][0]["frequency_hz"] == pytest.approx(exact, rel=0.03)


@pytest.mark.parametrize("gap", [5.0, 0.0])  # apart, or touching the big box at one corner
def test_pieces_that_share_no_face(tmp_path, capsys, gap):
    big_points, big = grid_box((3, 3, 3))
    corner = 15.0 + gap
    small_points, small = grid_box((1, 1, 1), origin=(corner, corner, corner))
    # Merge coincident points so that a touching corner is one node of both pieces.
    points, inverse = np.unique(np.vstack([big_points, small_points]), axis=0,
                                return_inverse=True)
    inverse = inverse.reshape(-1)
    tets = np.vstack([inverse[big], inverse[small + len(big_points)]])
    assert len(points) == len(big_points) + len(small_points) - (gap == 0)
    one_region(tmp_path / "part.msh", points, tets)
    err = mesh_refused(tmp_path, capsys)
    assert f"the tetrahedra form 2 separate pieces that share no face, of {len(big)} and " \
           f"{len(small)} tetrahedra" in err
    (where,) = points_in(err)
    assert np.all((where > corner) & (where < corner + 5.0))


def test_overlapping_tetrahedra(tmp_path, capsys):
    points, tets = grid_box((3, 3, 3))
    inner = next(i for i, t in enumerate(tets) if np.all((points[t] > 0) & (points[t] < 15)))
    tets = np.vstack([tets, tets[inner]])
    one_region(tmp_path / "part.msh", points, tets)
    err = mesh_refused(tmp_path, capsys)
    # A tetrahedron away from the boundary, twice over: each of its 4 faces has 3 owners.
    assert "4 triangles are faces of more than two tetrahedra" in err
    (where,) = points_in(err)
    assert where == pytest.approx(points[tets[inner]].mean(axis=0), abs=1e-3)


def test_wall_kind_on_an_inner_surface(tmp_path, capsys):
    points, tets = grid_box((2, 2, 2))
    tags = np.where(points[tets].mean(axis=1)[:, 0] < 5.0, 1, 2)
    faces = np.sort(tets[:, [[0, 1, 2], [0, 1, 3], [0, 2, 3], [1, 2, 3]]].reshape(-1, 3), axis=1)
    middle = np.unique(faces[np.all(points[faces][:, :, 0] == 5.0, axis=1)], axis=0)
    assert len(middle) == 8  # the plane x = 5 mm: 2 x 2 squares of two triangles each
    write_msh(tmp_path / "part.msh", points,
              [("tetra", tets, tags), ("triangle", middle, np.full(len(middle), 3))],
              {"slab": (1, 3), "air": (2, 3), "interface": (3, 2)})
    regions = '[regions.slab]\neps_r = 2\n[regions.air]\neps_r = 1\n'
    err = refused(tmp_path, capsys, regions=regions, extra='[walls.interface]\nkind = "pmc"\n')
    # This refusal comes from the model, after the mesh checks; it names the case and the key.
    assert "case.toml: walls.interface: the surface 'interface' is inside the mesh, not on its " \
           "boundary" in err


def test_builder_mesh_passes(tmp_path, capsys):
    # A gmsh mesh with a curved wall goes through the same checks as an imported one.
    case = tmp_path / "case.toml"
    case.write_text('[geometry]\nbuilder = "pillbox"\nradius = "12 mm"\nlength = "18 mm"\n'
                    '[mesh]\nsize = "3 mm"\n[solve]\nmodes = 1\n')
    assert main(["solve", str(case), "-q", "--no-report"]) == 0
    mode = json.loads((tmp_path / "case-results" / "modes.json").read_text())["modes"][0]
    # TM010: f = c j01 / (2 pi a), j01 the first zero of J0 (Pozar §6.4); coarse mesh.
    from scipy.special import jn_zeros
    exact = 299792458 * jn_zeros(0, 1)[0] / (2 * math.pi * 12 * MM)
    assert mode["frequency_hz"] == pytest.approx(exact, rel=0.02)


def test_face_matching_agrees_for_large_point_counts():
    # Meshes with 2**21 points or more take the row-sort path instead of one integer per face;
    # both must put the same faces together.
    from femcav.geometry.validate import sorted_face_ids
    faces = np.sort(np.random.default_rng(1).integers(0, 6, size=(400, 3)), axis=1)
    groups = []
    for n_points in (6, 2 ** 21):
        order, ids = sorted_face_ids(faces, n_points)
        ordered = faces[order]
        assert np.array_equal(ids[1:] == ids[:-1], np.all(ordered[1:] == ordered[:-1], axis=1))
        groups.append(sorted(map(tuple, ordered[np.r_[True, ids[1:] != ids[:-1]]])))
    assert groups[0] == groups[1] == sorted(set(map(tuple, faces)))
