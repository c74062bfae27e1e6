"""`femcav mesh`: the mean-ratio quality measure against its known values, and the command end
to end (files that read back with the same names, a picture that shows something, and bad
input that writes nothing)."""

import re
import struct

import meshio
import numpy as np
import pytest
from PIL import Image

from femcav.case import build_mesh, load_case
from femcav.cli import main
from femcav.geometry import box, read_mesh
from femcav.post.mesh_quality import mean_edge_length, mean_ratio
from femcav.viz import mesh_picture
from conftest import box_with_blocks, sorted_rows
from test_cli import BAD_CASES, SMALL_BOX, write_case  # SMALL_BOX: 20 x 10 x 25 mm, 3 mm

# Alternate corners of a cube form a regular tetrahedron (common practice).
REGULAR = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], dtype=float)
ONE_TET = np.array([[0, 1, 2, 3]])

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


# ---- the quality measure ---------------------------------------------------------------

def test_regular_tetrahedron_has_quality_one():
    # Mean ratio is 1 exactly for the regular tetrahedron (Liu & Joe, BIT 34, 1994; from memory).
    assert mean_ratio(REGULAR, ONE_TET)[0] == pytest.approx(1.0, abs=1e-14)


def test_corner_tetrahedron_by_hand():
    # Corner of the unit cube: |V| = 1/6, edges 1, 1, 1, √2, √2, √2, so Σl² = 9 and
    # q = 12 (1/2)^(2/3) / 9 (by hand from the definition in Liu & Joe 1994).
    corner = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], dtype=float)
    assert mean_ratio(corner, ONE_TET)[0] == pytest.approx(12 * 0.5 ** (2 / 3) / 9, rel=1e-14)


def test_flattened_tetrahedron_goes_to_zero():
    # A shape measure vanishes for a degenerate (flat) element (Liu & Joe 1994; from memory).
    base = np.array([[0, 0, 0], [1, 0, 0], [0.5, np.sqrt(3) / 2, 0]])
    heights = [1e-1, 1e-3, 1e-6]
    q = [mean_ratio(np.vstack([base, [0.5, 0.3, h]]), ONE_TET)[0] for h in heights]
    assert q[0] > q[1] > q[2] and q[2] < 1e-3
    assert mean_ratio(np.vstack([base, [0.2, 0.2, 0.0]]), ONE_TET)[0] == 0.0
    # Four coincident points have no shape at all: the worst value, not NaN.
    assert mean_ratio(np.zeros((4, 3)), ONE_TET)[0] == 0.0


def test_quality_ignores_size_position_orientation_and_vertex_order():
    # A shape measure is invariant under similarity transforms (common practice; Knupp 2001).
    rng = np.random.default_rng(7)
    points = rng.normal(size=(4, 3))
    q = mean_ratio(points, ONE_TET)[0]
    rotation, _ = np.linalg.qr(rng.normal(size=(3, 3)))
    for moved in (points * 1e-3, points * 1e4, points @ rotation.T + [5.0, -2.0, 0.1]):
        assert mean_ratio(moved, ONE_TET)[0] == pytest.approx(q, rel=1e-12)
    # Swapping two vertices flips the sign of the volume, not the shape.
    assert mean_ratio(points, np.array([[1, 0, 2, 3]]))[0] == pytest.approx(q, rel=1e-14)
    assert 0 < q < 1


def test_mean_edge_length_counts_shared_edges_once():
    # The corner tetrahedron of the unit cube (edges 1, 1, 1, √2, √2, √2) and, on its slanted
    # face, the regular tetrahedron reaching the far corner (1, 1, 1) (six edges √2): 9
    # distinct edges, 3 of length 1 and 6 of length √2 (by hand). Counting the shared face's
    # edges twice would give (3 + 9√2)/12 instead.
    points = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1], [1, 1, 1]], dtype=float)
    tets = np.array([[0, 1, 2, 3], [4, 1, 2, 3]])
    assert mean_edge_length(points, tets) == pytest.approx((3 + 6 * np.sqrt(2)) / 9, rel=1e-14)
    assert mean_ratio(points, tets)[1] == pytest.approx(1.0, abs=1e-14)


# ---- the command ----------------------------------------------------------------------

def png_size(path):
    """Width and height from the IHDR chunk, which the PNG specification puts first
    (W3C PNG Recommendation, 2nd ed. 2003, §5.2 and §11.2.2; from memory)."""
    head = path.read_bytes()[:24]
    assert head[:8] == PNG_SIGNATURE and head[12:16] == b"IHDR"
    return struct.unpack(">II", head[16:24])


def assert_not_blank(path):
    pixels = np.asarray(Image.open(path).convert("RGB"), dtype=float)
    background = pixels[5, -5]          # a corner, away from the title and the key
    differs = np.any(np.abs(pixels - background) > 30, axis=2)
    assert pixels.std() > 10 and differs.mean() > 0.1
    return pixels


def share_with_hue_of(pixels, colour, tolerance=12):
    """Share of the picture in the hue of ``colour``: shading changes brightness, not hue."""
    hsv = np.asarray(Image.fromarray(pixels.astype(np.uint8)).convert("HSV"), dtype=int)
    swatch = Image.new("RGB", (1, 1), colour).convert("HSV").getpixel((0, 0))
    near = np.abs((hsv[..., 0] - swatch[0] + 128) % 256 - 128) <= tolerance
    return float(np.mean(near & (hsv[..., 1] > 80) & (hsv[..., 2] > 40)))


def summary_rows(printed):
    """region -> (tetrahedra, mean edge in mm, min quality) from the printed table."""
    rows = {}
    for line in printed.splitlines():
        match = re.match(r"^(\S+)\s+(\d+)\s+([\d.]+) mm\s+([\d.]+)$", line)
        if match:
            rows[match[1]] = (int(match[2]), float(match[3]), float(match[4]))
    return rows


def test_mesh_command_on_a_box(tmp_path, capfd):
    case = write_case(tmp_path, SMALL_BOX)
    out = tmp_path / "meshed"
    assert main(["mesh", str(case), "--out", str(out), "-q"]) == 0
    captured = capfd.readouterr()
    assert captured.err == ""           # quiet, and VTK's display warnings kept out
    built = build_mesh(load_case(case))  # gmsh meshes with one thread: the same mesh again

    back = read_mesh(out / "mesh.msh")
    assert set(back.region_names) == {"inside"} and set(back.wall_names) == set(box.WALLS)
    assert back.n_tets == built.n_tets and len(back.faces) == len(built.faces)
    # the reader renumbers vertices for locality, so compare the point sets
    assert np.allclose(sorted_rows(back.points), sorted_rows(built.points), rtol=0, atol=1e-15)

    grid = meshio.read(out / "mesh.vtu")
    assert len(grid.cells_dict["tetra"]) == built.n_tets
    assert np.all(grid.cell_data["region"][0] == built.region_names["inside"])

    assert png_size(out / "mesh.png") == mesh_picture.IMAGE_SIZE
    pixels = assert_not_blank(out / "mesh.png")
    assert share_with_hue_of(pixels, mesh_picture.region_colours(built)["inside"]) > 0.1
    # the three files and the folder's list of what femcav wrote; no temporaries
    assert sorted(p.name for p in out.iterdir()) == [".femcav-files.json", "mesh.msh",
                                                     "mesh.png", "mesh.vtu"]

    printed = captured.out
    assert printed.startswith(f"small box: {built.n_tets} tetrahedra, {len(built.points)} nodes")
    assert printed.strip().endswith(f"mesh files: {out}")
    rows = summary_rows(printed)
    assert set(rows) == {"inside"} and rows["inside"][0] == built.n_tets
    # gmsh sizes edges after Mesh.MeshSizeMax (gmsh manual, from memory): a loose band.
    assert 1.5 < rows["inside"][1] < 3.9
    assert 0 < rows["inside"][2] <= 1


def test_mesh_command_on_two_regions_default_folder(tmp_path, capsys):
    source = box_with_blocks(tmp_path / "part.msh", (0.02, 0.01, 0.025),
                             {"block": (0.006, 0.003, 0.008, 0.008, 0.004, 0.009)},
                             mesh_size=0.004)
    case = write_case(tmp_path, '[geometry]\nmesh = "part.msh"\n[regions.air]\neps_r = 1\n'
                                '[regions.block]\neps_r = 9.8\n')
    assert main(["mesh", str(case), "-q"]) == 0
    out = tmp_path / "case-results"
    original = read_mesh(source)

    back = read_mesh(out / "mesh.msh")
    assert back.region_names == original.region_names
    assert back.wall_names == original.wall_names and back.n_tets == original.n_tets
    # the reader renumbers for locality: compare the region of each tetrahedron by centroid
    def regions_by_centroid(mesh):
        centroids = mesh.points[mesh.tets].mean(axis=1).round(12)
        return mesh.tet_region[np.lexsort(centroids.T[::-1])]
    assert np.array_equal(regions_by_centroid(back), regions_by_centroid(original))
    assert set(np.unique(meshio.read(out / "mesh.vtu").cell_data["region"][0])) == \
        set(original.region_names.values())

    rows = summary_rows(capsys.readouterr().out)
    for name, region_id in original.region_names.items():
        assert rows[name][0] == np.count_nonzero(original.tet_region == region_id)

    # The block sits wholly inside the air: it is visible only if the air is see-through.
    assert png_size(out / "mesh.png") == mesh_picture.IMAGE_SIZE
    pixels = assert_not_blank(out / "mesh.png")
    assert mesh_picture.see_through_region(original) == "air"
    assert share_with_hue_of(pixels, mesh_picture.region_colours(original)["block"]) > 0.02


def test_region_surfaces_of_a_block_in_a_box(tmp_path):
    # A block inside a box: the block has no outer faces; the air's outer faces are the
    # box walls, which are exactly the named wall triangles (the walls cover the box).
    mesh = read_mesh(box_with_blocks(tmp_path / "b.msh", (1.0, 1.0, 1.0),
                                     {"block": (0.3, 0.3, 0.3, 0.4, 0.4, 0.4)}, mesh_size=0.3))
    surfaces = mesh_picture.region_surfaces(mesh)
    (air_all, air_outer), (block_all, block_outer) = surfaces["air"], surfaces["block"]
    assert len(block_outer) == 0
    as_set = lambda faces: {tuple(sorted(f)) for f in faces}  # noqa: E731
    assert as_set(air_outer) == as_set(mesh.faces)
    assert as_set(air_all) == as_set(air_outer) | as_set(block_all)
    # The block's surface is closed: the six faces of a 0.4 m cube, 0.96 m² in all.
    p = mesh.points[block_all]
    area = np.linalg.norm(np.cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]), axis=1).sum() / 2
    assert area == pytest.approx(6 * 0.4 ** 2, rel=1e-12)


@pytest.mark.parametrize("name", list(BAD_CASES))
def test_bad_case_exits_2_and_writes_nothing(tmp_path, capsys, name):
    # Every mistake that the solve command refuses, the mesh command refuses the same way.
    text, expected = BAD_CASES[name]
    out = tmp_path / "meshed"
    status = main(["mesh", str(write_case(tmp_path, text)), "--out", str(out), "-q"])
    (line,) = capsys.readouterr().err.strip().splitlines()
    assert status == 2 and line.startswith("femcav: error: ") and expected in line
    assert not out.exists() and not (tmp_path / "case-results").exists()


def test_failure_while_writing_leaves_old_files(tmp_path, monkeypatch):
    case = write_case(tmp_path, SMALL_BOX.replace('"3 mm"', '"6 mm"'))
    out = tmp_path / "meshed"
    out.mkdir()
    (out / "mesh.msh").write_text("previous")

    def broken(*args, **kwargs):
        raise RuntimeError("renderer failed")

    monkeypatch.setattr(mesh_picture, "draw_mesh_picture", broken)
    with pytest.raises(RuntimeError, match="renderer failed"):
        main(["mesh", str(case), "--out", str(out), "-q"])
    assert [p.name for p in out.iterdir()] == ["mesh.msh"]
    assert (out / "mesh.msh").read_text() == "previous"
