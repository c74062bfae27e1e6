"""Meshes that used to pass the checks and then gave wrong answers or tracebacks: inner
faces that silently became metal sheets, coordinates that are not finite or not of a part's
size, and curved elements whose midside nodes fold them over. Each is refused with one line
(exit status 2) that says what and where; a sheet named as a wall is a legitimate model."""

import json
import math
import re

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
        # order 2: at order 1 this 5 mm grid holds the sheet's mode at the resolution
        # threshold (4 elements per wavelength at 12 GHz)
        assert main(["solve", str(write_case(folder, extra=walls)), "-q", "--order", "2",
                     "--no-report"]) == 0
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


@pytest.mark.parametrize("spoil, words", [
    (lambda p: p.__setitem__((7, 1), np.nan), "1 of 90 nodes have a coordinate that is not a "
                                              "finite number"),
    (lambda p: p.__setitem__((3, 2), np.inf), "1 of 90 nodes have a coordinate that is not a "
                                              "finite number"),
    (lambda p: p.__imul__(1e300), "the mesh spans 2.5e+298 m"),   # 25 mm x 1e300, in metres
])
def test_coordinates_that_are_not_a_parts(tmp_path, capsys, spoil, words):
    points, tets = grid_box((4, 2, 5))
    assert len(points) == 90
    spoil(points)
    one_region(tmp_path / "part.msh", points, tets)
    assert words in mesh_refused(tmp_path, capsys)


@pytest.mark.parametrize("value", [np.nan, 1e300])
def test_section_coordinates_that_are_not_a_parts(tmp_path, capsys, value):
    # A 10 x 10 mm square section off the axis, two triangles; one coordinate spoiled.
    points = np.array([[1.0, 0, 0], [11, 0, 0], [11, 10, 0], [1, 10, 0]])
    points[2, 1] = value
    write_msh(tmp_path / "part.msh", points, [("triangle", [[0, 1, 2], [0, 2, 3]], [1, 1])],
              {"inside": (1, 2)})
    case = tmp_path / "case.toml"
    case.write_text('[geometry]\nmesh = "part.msh"\nmesh_unit = "mm"\n[regions.inside]\n'
                    'eps_r = 1\n[solve]\nmodes = 1\nazimuthal_orders = [0]\n')
    assert main(["solve", str(case), "-q"]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert err.startswith(f"femcav: error: {tmp_path / 'part.msh'}: ")
    assert ("not a finite number" if np.isnan(value) else "the mesh spans") in err


def quadratic_box():
    """The grid box as 10-node tetrahedra with straight edges (midside nodes at the middle),
    in meshio's node order: corners, then the edges 01, 12, 02, 03, 13, 23."""
    points, tets = grid_box((4, 2, 5))
    pairs = [(0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3)]
    edges = np.unique(np.sort(np.concatenate([tets[:, list(e)] for e in pairs]), axis=1),
                      axis=0)
    middle = {tuple(e): len(points) + k for k, e in enumerate(edges.tolist())}
    points = np.vstack([points, points[edges].mean(axis=1)])
    mids = np.array([[middle[tuple(sorted((t[a], t[b])))] for a, b in pairs]
                     for t in tets.tolist()])
    return points, np.hstack([tets, mids])


def test_tangled_midside_node_is_refused(tmp_path, capsys):
    from femcav.geometry import read_mesh

    points, tets10 = quadratic_box()
    write_msh(tmp_path / "straight.msh", points, [("tetra10", tets10, np.ones(len(tets10)))],
              {"inside": (1, 3)})
    read_mesh(tmp_path / "straight.msh", scale=MM)        # straight quadratic: accepted
    # Move the midside node of one inner edge past the far side of the elements around it:
    # a quadratic map whose midside node leaves the middle third of its edge's neighbourhood
    # folds over (its Jacobian changes sign; common practice for quadratic elements).
    inner = next(m for m in tets10[:, 4:].reshape(-1)
                 if np.all((points[m] > 0) & (points[m] < [20, 10, 25])))
    edge_direction = points[inner] - points[tets10[np.argwhere(tets10 == inner)[0][0], 0]]
    moved = points.copy()
    moved[inner] = points[inner] + 6.0 * np.cross(edge_direction, [0.3, 0.5, 0.8]) / max(
        np.linalg.norm(np.cross(edge_direction, [0.3, 0.5, 0.8])), 1e-9)
    write_msh(tmp_path / "part.msh", moved, [("tetra10", tets10, np.ones(len(tets10)))],
              {"inside": (1, 3)})
    err = mesh_refused(tmp_path, capsys)
    users = np.count_nonzero(np.any(tets10 == inner, axis=1))
    assert re.search(rf"(\d+) of {len(tets10)} tetrahedra \(in region 'inside'\) (is|are) "
                     "curved so far", err)
    count = int(re.search(r"(\d+) of", err).group(1))
    assert 1 <= count <= users                 # only elements that use the moved node
    assert "negative: folded over" in err and "down to -" in err
    (where,) = points_in(err)
    assert np.linalg.norm(where - moved[inner]) < 12.0   # within the elements around it


def test_reader_errors_quote_nothing_of_the_file(tmp_path, capsys):
    secret = "LARKSPUR-PRIVATE-7731"
    (tmp_path / "part.msh").write_text(f"$MeshFormat\n2.2 0 8\n$EndMeshFormat\n$Nodes\n"
                                       f"{secret} 1 2\n")
    err = mesh_refused(tmp_path, capsys)
    assert secret not in err and "not a valid mesh" in err
    (tmp_path / "part.msh").write_text(f"{secret}\n")
    err = mesh_refused(tmp_path, capsys)
    assert secret not in err and "ANSYS" in err


def strict(text: str):
    def refuse(token):
        raise ValueError(f"non-standard JSON token {token}")
    return json.loads(text, parse_constant=refuse)


def test_json_is_strict_even_with_non_finite_values(tmp_path):
    from dataclasses import replace

    import femcav
    from femcav.io import strict_json
    from femcav.io.results import to_json

    assert strict(strict_json.dumps({"a": [float("nan"), np.float64("inf"), 1.5],
                                     "b": {"c": -np.inf, "d": np.arange(2)}})) == {
        "a": [None, None, 1.5], "b": {"c": None, "d": [0, 1]}}
    points, tets = grid_box((4, 2, 5))
    one_region(tmp_path / "part.msh", points, tets)
    _, result, _ = femcav.run_case(write_case(tmp_path), out=tmp_path / "out")
    first = result.modes[0]
    broken = replace(result, modes=[replace(first, frequency_hz=float("nan"), checks=replace(
        first.checks, residual=float("inf")))])
    document = strict(to_json(broken, title="t", case=None))
    assert document["modes"][0]["frequency_hz"] is None
    assert document["modes"][0]["residual"] is None
