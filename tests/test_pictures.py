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
