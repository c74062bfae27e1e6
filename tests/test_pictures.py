"""Mode pictures from saved results, off-screen: real PNGs of the set size that differ
between modes, made again from a result folder without solving."""

from __future__ import annotations

import numpy as np
import pytest

from femcav.cli import main
from femcav.errors import InputError
from femcav.viz.mode_picture import IMAGE_SIZE
from femcav.viz.show import show

CASE = """
title = "Made-up test box"
[geometry]
builder = "box"
width = "22.86 mm"
height = "10.16 mm"
length = "30 mm"
[mesh]
size = "3 mm"
[solve]
modes = 3
"""


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    from conftest import solved_folder
    return solved_folder(tmp_path_factory.mktemp("pictures"), CASE, "--no-report")


def test_show_draws_every_mode(folder, capsys):
    from PIL import Image

    assert main(["show", str(folder)]) == 0
    paths = [folder / f"mode_{k:02d}.png" for k in (1, 2, 3)]
    images = []
    for path in paths:
        with Image.open(path) as image:
            assert image.format == "PNG" and image.size == IMAGE_SIZE
            images.append(np.asarray(image.convert("RGB"), dtype=float))
        assert images[-1].std() > 10          # not a blank canvas
    # two different modes give clearly different pictures (TE101 and TE102 here)
    assert np.abs(images[0] - images[1]).mean() > 2.0
    assert str(paths[0]) in capsys.readouterr().out


def test_show_one_mode_with_h_arrows(folder):
    for name in folder.glob("mode_*.png"):
        name.unlink()
    written = show(folder, mode=2, arrows="H")
    assert [p.name for p in written] == ["mode_02.png"]
    assert not (folder / "mode_01.png").exists()


def test_show_refuses_a_folder_without_results(tmp_path):
    from femcav.errors import BrokenResultFolder

    with pytest.raises(BrokenResultFolder, match="not a femcav solve result folder"):
        show(tmp_path)
    (tmp_path / "modes.json").write_text('{"format": "femcav-modes", "modes": []}')
    (tmp_path / "fields.vtu").write_text("")
    with pytest.raises(InputError, match="not 3"):
        show(tmp_path, mode=3)


def test_spectrum_picture_and_weyl_summary(folder):
    import json

    from PIL import Image

    (folder / "report.html").unlink(missing_ok=True)    # (solved with --no-report)
    show(folder)
    with Image.open(folder / "spectrum.png") as image:
        assert image.format == "PNG" and image.size[0] > 600
    report = (folder / "report.html").read_text(encoding="utf-8")   # show rebuilt it
    assert report.startswith("<!DOCTYPE html>") and "Made-up test box" in report
    assert report.count("data:image/png;base64,") == 4     # the spectrum and 3 modes
    weyl = json.loads((folder / "modes.json").read_text())["weyl"]
    assert weyl["optical_volume_m3"] == pytest.approx(0.02286 * 0.01016 * 0.030, rel=1e-9)
    assert weyl["listed_share"] == 1.0


def test_mode_count_approaches_weyl_from_below(tmp_path):
    # N(k) ≈ V k³ / (3π²) (Weyl 1912, from memory); for a box the count of the closed form
    # stays near it, mostly below (the next term is negative), and closes in as the modes
    # grow dense: measured 0.63 to 1.02 of it from the 6th to the 120th mode.
    from femcav.analytic.box import lowest_box_frequencies
    from femcav.viz.spectrum import weyl_count

    a, b, d = 0.02286, 0.01016, 0.030
    frequencies = lowest_box_frequencies(a, b, d, 120)
    ratios = np.array([(k + 1) / weyl_count(f, a * b * d) for k, f in enumerate(frequencies)])
    assert ratios[5:].min() > 0.55 and ratios[5:].max() < 1.1
    assert 0.85 < ratios[-20:].mean() < 1.05 and ratios[-20:].mean() > ratios[5:25].mean()


# --- what the pictures show (issue 26: pictures an engineer can read) ----------------------

def _colour_map_levels(path):
    """Each pixel that shows a colour of the cividis map: its level 0..255 (pixels of the
    background, skins, arrows and text match no level and are left out)."""
    from matplotlib import colormaps
    from PIL import Image
    from scipy.spatial import cKDTree

    cmap = colormaps["cividis"](np.linspace(0, 1, 64))[:, :3] * 255
    with Image.open(path) as image:
        pixels = np.asarray(image.convert("RGB"), dtype=float).reshape(-1, 3)
    distance, nearest = cKDTree(cmap).query(pixels)
    on_map = distance < 12
    return nearest[on_map] * 4, pixels.shape[0]


@pytest.fixture(scope="module")
def reentrant_folder(tmp_path_factory):
    """The demo re-entrant cavity (geometries/), coarsened for speed: a 4 mm mesh and a
    2.5 mm gap keep its rod's sharp edges, where |E| is singular, at 7000 tetrahedra."""
    from pathlib import Path

    from conftest import solved_folder

    text = (Path(__file__).resolve().parent.parent / "geometries"
            / "reentrant_oscillator_cavity.toml").read_text(encoding="utf-8")
    text = (text.replace('size = "1.5 mm"', 'size = "4 mm"').replace("modes = 3", "modes = 1")
            .replace('gap = "0.8 mm"', 'gap = "2.5 mm"'))
    assert 'gap = "2.5 mm"' in text and 'size = "4 mm"' in text
    return solved_folder(tmp_path_factory.mktemp("reentrant"), text, "--no-report")


def test_reentrant_picture_is_neither_saturated_nor_dark(reentrant_folder, tmp_path):
    from femcav.viz.mode_picture import draw_mode_picture
    from femcav.viz.show import read_fields

    grid = read_fields(reentrant_folder, [1], "E")
    # half the usual size: the same drawing, a quarter of the pixels to render
    draw_mode_picture(grid, 1, "re-entrant", tmp_path / "mode.png",
                      size=(IMAGE_SIZE[0] // 2, IMAGE_SIZE[1] // 2))
    levels, total = _colour_map_levels(tmp_path / "mode.png")
    # unlit planes show the colour map's own colours: a large share of the picture matches
    # it (lit planes shifted most of their pixels off the map: 8 % matched)
    assert levels.size > 0.15 * total
    # the clipped scale saturates little (1 % here at the top level) ...
    assert np.mean(levels >= 252) < 0.05
    # ... and the field away from the rod's edges is not painted near black: with the scale
    # topped at the singular maximum, 90 % of the field's pixels sat in the lowest tenth
    assert np.mean(levels < 26) < 0.6


def test_clipped_scale_is_the_volume_weighted_percentile():
    from femcav.viz.scales import HEADROOM, clipped_top

    rng = np.random.default_rng(3)
    # a field singular like r^(-1/3) at an edge (common practice for a right-angled metal
    # edge), sampled on cells graded towards it: small cells carry the large values
    r = np.concatenate([rng.uniform(1e-4, 1e-2, 500), rng.uniform(1e-2, 1.0, 2000)])
    volume = np.where(r < 1e-2, 1e-6, 1e-3)
    value = r ** (-1 / 3)
    reference = np.percentile(value, 99, weights=volume, method="inverted_cdf")  # numpy
    assert clipped_top(value, volume) == pytest.approx(HEADROOM * reference, rel=1e-12)
    assert clipped_top(value, volume) < 0.5 * value.max()     # the edge does not set it
    # a smooth field (sin over a box, its peak near its 99th percentile) keeps its maximum
    smooth = np.sin(np.linspace(0, np.pi, 2001))
    assert clipped_top(smooth, np.ones_like(smooth)) == smooth.max()


def test_h_arrows_take_their_plane_from_h():
    from femcav.viz.planes import arrow_plane

    # TE101 of an a x b x d box: E = y sin(πx/a) sin(πz/d); H has x and z parts only
    # (Pozar, Microwave Engineering, 4th ed., §6.3; from memory)
    a, b, d = 0.02286, 0.01016, 0.030
    rng = np.random.default_rng(5)
    centres = rng.uniform(0, 1, (4000, 3)) * (a, b, d)
    x, z = centres[:, 0], centres[:, 2]
    E = np.zeros_like(centres)
    E[:, 1] = np.sin(np.pi * x / a) * np.sin(np.pi * z / d)
    H = np.zeros_like(centres)
    H[:, 0] = -np.sin(np.pi * x / a) * np.cos(np.pi * z / d) / d
    H[:, 2] = np.cos(np.pi * x / a) * np.sin(np.pi * z / d) / a
    volumes = np.ones(len(centres))
    assert arrow_plane(centres, H, volumes)[0] == 1       # H lies in the planes y = const
    assert arrow_plane(centres, E, volumes)[0] != 1       # E is normal to them


def test_the_picture_chooses_the_arrow_plane_from_the_arrows_field(folder, monkeypatch):
    import pyvista as pv

    from femcav.viz import mode_picture

    seen = []
    original = mode_picture.arrow_plane
    monkeypatch.setattr(mode_picture, "arrow_plane",
                        lambda c, v, w: seen.append(v) or original(c, v, w))
    show(folder, mode=1, arrows="H")
    grid = pv.read(folder / "fields.vtu")
    assert len(seen) == 1 and np.array_equal(seen[0], np.asarray(grid.cell_data["m01_H"]))


def test_h_magnitude_by_choice(folder):
    from PIL import Image

    show(folder, mode=1, field="E")
    with Image.open(folder / "mode_01.png") as image:
        e_picture = np.asarray(image.convert("RGB"), dtype=float)
    show(folder, mode=1, field="H")
    with Image.open(folder / "mode_01.png") as image:
        h_picture = np.asarray(image.convert("RGB"), dtype=float)
    # TE101: |E| peaks mid-box, |H| at the z walls: clearly different pictures
    assert np.abs(e_picture - h_picture).mean() > 2.0


def test_weyl_comparison_only_where_it_means_something():
    from femcav.viz.spectrum import MIN_MODES_FOR_WEYL, weyl_not_meaningful

    document = {"weyl": {"optical_volume_m3": 1e-5, "listed_share": 1.0},
                "request": {"near_hz": None}}
    assert weyl_not_meaningful(document, MIN_MODES_FOR_WEYL) == ""
    assert "too few" in weyl_not_meaningful(document, 6)
    near = {**document, "request": {"near_hz": 9e9}}
    assert "near a frequency" in weyl_not_meaningful(near, 40)
    orders = {**document, "weyl": {"optical_volume_m3": 1e-5, "listed_share": None,
                                   "note": "azimuthal orders [0, 1] only"}}
    assert "azimuthal orders" in weyl_not_meaningful(orders, 40)


def test_mesh_picture_shows_a_post_inside_a_one_region_part():
    from femcav.geometry import build_part
    from femcav.viz.inner_walls import off_hull
    from femcav.viz.mesh_picture import region_surfaces

    part = build_part("tuned_box", width=0.02, height=0.01, length=0.025, post_radius=0.002,
                      post_depth=0.004, mesh_size=0.004)
    _, outer = region_surfaces(part)["inside"]
    inside = off_hull(part.points, outer)
    post = {tuple(sorted(f)) for f in part.faces[part.face_tag == part.wall_names["post"]]}
    flagged = {tuple(sorted(f)) for f in outer[inside]}
    # every post triangle is drawn as a wall inside the part, and nothing else is
    assert flagged == post and len(post) > 0


def test_spectrum_leaves_room_for_its_markers(tmp_path, monkeypatch):
    import matplotlib.pyplot as plt

    from femcav.viz.spectrum import write_spectrum

    figures = []
    monkeypatch.setattr(plt, "close", figures.append)
    qs = [1.2e4, 3.0e3, 9.9e3]
    document = {"title": "t", "weyl": {}, "request": {"near_hz": None},
                "modes": [{"index": k + 1, "frequency_hz": 9e9 + k * 1e9, "q_total": q}
                          for k, q in enumerate(qs)]}
    write_spectrum(document, tmp_path / "spectrum.png")
    top_axes = figures[0].axes[0]
    low, high = top_axes.get_ylim()
    # a marker at the top (or bottom) of a log axis is cut in half: keep a margin
    monkeypatch.undo()
    plt.close(figures[0])
    assert high > 1.5 * max(qs) and low < min(qs) / 1.5
