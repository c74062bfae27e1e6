"""No runaway meshing: a builder mesh that cannot fit is refused from an estimate of its
element count before gmsh is called (3D, meridional sections, per_wavelength, femcav mesh);
lengths out of a part's range are refused with their key; Ctrl-C during meshing ends the
run at once with one line and status 130."""

import math
import os
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import gmsh
import pytest

from femcav.cli import main

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture
def no_gmsh(monkeypatch):
    """Fail the test if gmsh is started: the refusals below come before any meshing."""
    def refuse(*args, **kwargs):
        raise AssertionError("gmsh was called")
    monkeypatch.setattr(gmsh, "initialize", refuse)


def one_line_refusal(capsys, args, tmp_path) -> str:
    assert main(args) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert not any(p.name.endswith("-results") for p in tmp_path.iterdir())
    return err


def estimate_in(message: str) -> float:
    return float(re.search(r"about (\S+) (?:tetrahedra|triangles)", message).group(1))


BIG_BOX = ('[geometry]\nbuilder = "box"\nwidth = "1 m"\nheight = "1 m"\nlength = "1 m"\n'
           '[mesh]\nsize = "0.5 mm"\n')
SECTION = ('[geometry]\nbuilder = "pillbox"\nradius = "10 mm"\nlength = "10 mm"\n'
           '[mesh]\nsize = "2 um"\n[solve]\nazimuthal_orders = [0, 1]\n')
PER_WAVELENGTH = ('[geometry]\nbuilder = "box"\nwidth = "20 mm"\nheight = "10 mm"\n'
                  'length = "25 mm"\n[mesh]\nmax_frequency = "10 THz"\nper_wavelength = 100\n')


@pytest.mark.parametrize("command", ["solve", "mesh"])
@pytest.mark.parametrize("text, measure, size", [
    (BIG_BOX, 1.0, 0.5e-3),                                    # m³, m
    (PER_WAVELENGTH, 20e-3 * 10e-3 * 25e-3, 299792458 / 10e12 / 100),
])
def test_oversize_3d_mesh_is_refused_before_meshing(tmp_path, capsys, no_gmsh, command,
                                                    text, measure, size):
    case = tmp_path / "case.toml"
    case.write_text(text)
    err = one_line_refusal(capsys, [command, str(case), "-q"], tmp_path)
    assert err.startswith(f"femcav: error: {case}: mesh: ") and "tetrahedra" in err
    # Tetrahedra of edge about h fill a volume V with V / (h³ / 6√2) = 8.5 V/h³ when regular;
    # a real mesh has a few per h³ (common practice): the estimate must say so.
    assert 2 * measure / size**3 < estimate_in(err) < 10 * measure / size**3
    assert "is what fits in the" in err or "hard limit" in err


def test_oversize_section_is_refused_before_meshing(tmp_path, capsys, no_gmsh):
    case = tmp_path / "case.toml"
    case.write_text(SECTION)
    err = one_line_refusal(capsys, ["solve", str(case), "-q"], tmp_path)
    assert "triangles in the meridional section" in err
    # Equilateral triangles of side h: 4/√3 = 2.3 per h² (common practice); the section is
    # 10 x 10 mm.
    area, size = 10e-3 * 10e-3, 2e-6
    assert 1.5 * area / size**2 < estimate_in(err) < 5 * area / size**2


def test_estimate_follows_gmsh_within_a_third():
    # The estimate against gmsh's own count for the same part and sizes (a dielectric puck on
    # a support: three regions, two sizes).
    from femcav.geometry import BUILDERS, build_part
    from femcav.geometry.mesh_budget import estimated_elements
    from femcav.geometry.parts import Sizing

    dims = {"shield_radius": 0.012, "shield_height": 0.016, "puck_radius": 0.005,
            "puck_height": 0.004, "support_height": 0.004}
    full = {k: p.default for k, p in BUILDERS["dr_fixture"].PARAMETERS.items()
            if not p.required} | dims
    sizing = Sizing(size=0.002, region_sizes={"puck": 0.001})
    estimate = estimated_elements(BUILDERS["dr_fixture"].layout(**full), sizing)
    real = build_part("dr_fixture", sizing=sizing, **dims).n_tets
    assert 0.75 * real < estimate < 1.33 * real


@pytest.mark.parametrize("key, text, field", [
    ("width", 'width = "1e30 mm"\nheight = "10 mm"\nlength = "10 mm"', "geometry.width"),
    ("width", 'width = "10 mm"\nheight = "0.1 nm"\nlength = "10 mm"', "geometry.height"),
    ("size", 'width = "10 mm"\nheight = "10 mm"\nlength = "10 mm"\n[mesh]\nsize = "1e30 mm"',
     "mesh.size"),
])
def test_lengths_out_of_a_parts_range_are_refused_with_their_key(tmp_path, capsys, no_gmsh,
                                                                 key, text, field):
    case = tmp_path / "case.toml"
    case.write_text(f'[geometry]\nbuilder = "box"\n{text}\n')
    err = one_line_refusal(capsys, ["solve", str(case), "-q"], tmp_path)
    assert f"{case}: {field}: " in err


def test_composite_and_proportion_limits_name_the_key(tmp_path, capsys, no_gmsh):
    case = tmp_path / "case.toml"
    case.write_text('[geometry]\nbuilder = "composite"\n[[geometry.solids]]\nshape = "box"\n'
                    'role = "space"\ncorner = ["0 mm", "0 mm", "0 mm"]\n'
                    'size = ["10 mm", "10 mm", "1e30 mm"]\n')
    err = one_line_refusal(capsys, ["solve", str(case), "-q"], tmp_path)
    assert "geometry.solids[0].size[2]: " in err
    # a post of 0.5 mm radius in a box 1 km long: below a millionth of the part's size
    case.write_text('[geometry]\nbuilder = "tuned_box"\nwidth = "1 m"\nheight = "1 m"\n'
                    'length = "1 km"\npost_radius = "0.5 mm"\npost_depth = "10 mm"\n')
    err = one_line_refusal(capsys, ["solve", str(case), "-q"], tmp_path)
    assert "geometry.post_radius: " in err


def test_ctrl_c_during_meshing_ends_with_one_line(tmp_path):
    # A box of about 400k tetrahedra takes gmsh tens of seconds; SIGINT a second into it must
    # end the command at once, with one line and the shell's status for SIGINT (128 + 2).
    from femcav.geometry.gmsh_session import EXIT_INTERRUPTED, INTERRUPTED

    case = tmp_path / "case.toml"
    case.write_text('[geometry]\nbuilder = "box"\nwidth = "30 mm"\nheight = "30 mm"\n'
                    'length = "30 mm"\n[mesh]\nsize = "0.45 mm"\n')
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OMP_NUM_THREADS": "1"}
    # The child gets SIGINT's default action back: a suite started in the background by a
    # non-interactive shell runs with SIGINT ignored, which the child would inherit.
    process = subprocess.Popen([sys.executable, "-m", "femcav", "mesh", str(case)],
                               stderr=subprocess.PIPE, text=True, env=env, cwd=tmp_path,
                               preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    try:
        first = process.stderr.readline()           # "[ ... s] case ...": meshing follows
        assert "case" in first
        time.sleep(1.0)
        assert process.poll() is None
        sent = time.monotonic()
        process.send_signal(signal.SIGINT)
        # bounded: a lost interrupt must fail the test, not hang the suite
        _, rest = process.communicate(timeout=60)
        status = process.returncode
        waited = time.monotonic() - sent
    finally:
        if process.poll() is None:
            process.kill()
            process.wait()
    assert status == EXIT_INTERRUPTED == 130
    assert rest.strip().splitlines() == [INTERRUPTED]
    assert waited < 10 and not (tmp_path / "case-results").exists()
    assert math.isfinite(waited)
