"""Meshes that used to pass the checks and then gave wrong answers or tracebacks: inner
faces that silently became metal sheets, coordinates that are not finite or not of a part's
size, and curved elements whose midside nodes fold them over. Each is refused with one line
(exit status 2) that says what and where; a sheet named as a wall is a legitimate model."""

import json
import math

import meshio
import numpy as np
import pytest

from femcav.cli import main
from test_mesh_validation import MM, grid_box, mesh_refused, one_region, points_in, write_case, \
    write_msh

C0 = 299792458.0


def te101(a: float, d: float) -> float:
    # TE101 of an a x b x d box (b < a < d): (c/2) sqrt(1/a² + 1/d²) (Pozar §6.3).
    return C0 / 2 * math.hypot(1 / a, 1 / d)


def cracked_box(plane_z: float = 10.0, crack_x: float = 10.0):
    """The 20 x 10 x 25 mm box of 5 mm cubes with the nodes of the plane z = plane_z
    duplicated for the tetrahedra above it where x < crack_x: a crack over that part of the
    plane, whose edge x = crack_x stays joined."""
    points, tets = grid_box((4, 2, 5))
    on_crack = np.flatnonzero((points[:, 2] == plane_z) & (points[:, 0] < crack_x))
    copy = np.full(len(points), -1)
    copy[on_crack] = len(points) + np.arange(len(on_crack))
    points = np.vstack([points, points[on_crack]])
    above = points[tets].mean(axis=1)[:, 2] > plane_z
    moved = tets[above]
    moved = np.where(copy[moved] >= 0, copy[moved], moved)
    tets = tets.copy()
    tets[above] = moved
    return points, tets


def crack_faces(points, tets, plane_z: float = 10.0):
    """Every boundary triangle in the crack plane (both sides)."""
    faces = tets[:, [[0, 1, 2], [0, 1, 3], [0, 2, 3], [1, 2, 3]]].reshape(-1, 3)
    keys, counts = np.unique(np.sort(faces, axis=1), axis=0, return_counts=True)
    boundary = keys[counts == 1]
    return boundary[np.all(points[boundary][:, :, 2] == plane_z, axis=1)]


def test_crack_is_refused_with_its_place(tmp_path, capsys):
    points, tets = cracked_box()
    one_region(tmp_path / "part.msh", points, tets)
    err = mesh_refused(tmp_path, capsys)
    # The crack covers 2 x 2 squares of 5 mm (x < 10 mm, all of y), two triangles each, on
    # each of its two sides: 16 faces in the box 0..10 x 0..10 mm at z = 10 mm.
    assert "16 boundary triangles have mesh volume on both sides" in err
    assert "(x, y, z) = (0, 0, 10) to (10, 10, 10) mm" in err
    assert "name its faces as a wall" in err


def test_meshes_that_do_not_match_across_an_interface(tmp_path, capsys):
    # Two boxes meshed on their own, one on top of the other, with cells of different sizes:
    # the interface z = 10 mm has no shared nodes apart from its rim, and none of its faces
    # match. Both sides' faces are inside the part.
    low_points, low = grid_box((4, 2, 2))                        # 20 x 10 x 10 mm, 5 mm
    high_points, high = grid_box((2, 1, 3), step=10.0, origin=(0, 0, 10))  # 20 x 10 x 30
    points = np.vstack([low_points, high_points])
    tets = np.vstack([low, high + len(low_points)])
    points, inverse = np.unique(points, axis=0, return_inverse=True)
    tets = inverse.reshape(-1)[tets]
    one_region(tmp_path / "part.msh", points, tets)
    err = mesh_refused(tmp_path, capsys)
    # 4 x 2 squares of two triangles below, 2 x 1 of two above.
    assert "20 boundary triangles have mesh volume on both sides" in err
    assert "(x, y, z) = (0, 0, 10) to (20, 10, 10) mm" in err


def test_crack_named_as_a_wall_is_a_metal_sheet(tmp_path, capsys):
    frequencies = {}
    for name, (points, tets) in {"whole": grid_box((4, 2, 5)),
                                 "sheet": cracked_box()}.items():
        folder = tmp_path / name
        folder.mkdir()
        sheet = crack_faces(points, tets)          # none in the whole box
        blocks = [("tetra", tets, np.ones(len(tets)))]
        if len(sheet):
            blocks.append(("triangle", sheet, np.full(len(sheet), 2)))
        write_msh(folder / "part.msh", points, blocks, {"inside": (1, 3), "vane": (2, 2)})
        walls = '[walls.vane]\nkind = "pec"\n' if len(sheet) else ""
        assert main(["solve", str(write_case(folder, extra=walls)), "-q"]) == 0
        frequencies[name] = json.loads((folder / "case-results" / "modes.json")
                                       .read_text())["modes"][0]["frequency_hz"]
    # A PEC sheet only constrains the E form's space further, so the lowest frequency can only
    # rise; a sheet over the whole plane (two boxes 20 x 10 x 10 and 20 x 10 x 15 mm) would
    # constrain it more still (Courant-Fischer min-max principle; common practice). The
    # coarse mesh is within 3 % of the closed forms (test_mesh_validation).
    whole, sheet = frequencies["whole"], frequencies["sheet"]
    assert whole == pytest.approx(te101(20 * MM, 25 * MM), rel=0.03)
    assert sheet > 1.03 * whole
    assert sheet < 1.03 * te101(20 * MM, 15 * MM)


def test_sheet_named_on_one_side_gets_its_kind_on_both(tmp_path):
    from femcav.geometry import read_mesh

    points, tets = cracked_box()
    sheet = crack_faces(points, tets)
    below = sheet[np.all(sheet < len(grid_box((4, 2, 5))[0]), axis=1)]   # original nodes
    write_msh(tmp_path / "part.msh", points,
              [("tetra", tets, np.ones(len(tets))), ("triangle", below, np.full(len(below), 2))],
              {"inside": (1, 3), "vane": (2, 2)})
    mesh = read_mesh(tmp_path / "part.msh", scale=MM)
    named = mesh.faces[mesh.face_tag == mesh.wall_names["vane"]]
    # 8 triangles on each side of the crack.
    assert len(below) == 8 and len(named) == 16
    assert np.allclose(mesh.points[named][:, :, 2], 10 * MM)
