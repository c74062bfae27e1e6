"""The README's Python examples use the public surface only, and it works as written.

Reference: the closed-form TE101 resonance of a rectangular cavity,
f = (c/2) sqrt((1/a)² + (1/d)²) (Pozar, Microwave Engineering, 4th ed., §6.3, from memory),
and the TM010 resonance of a pillbox, f = c p01 / (2π a) with p01 from scipy.special.
"""

import ast
import math
import re
from pathlib import Path

import pytest
from scipy.constants import c
from scipy.special import jn_zeros

import femcav

README = Path(__file__).resolve().parent.parent / "README.md"


def _python_blocks() -> list[str]:
    return re.findall(r"```python\n(.*?)```", README.read_text(encoding="utf-8"), re.S)


def test_readme_examples_import_from_femcav_only():
    blocks = _python_blocks()
    assert blocks
    for block in blocks:
        for node in ast.walk(ast.parse(block)):
            if isinstance(node, ast.ImportFrom):
                assert node.module == "femcav" or not node.module.startswith("femcav"), \
                    f"deep import in the README: from {node.module} import ..."
            if isinstance(node, ast.Import):
                assert all(a.name == "femcav" or not a.name.startswith("femcav.")
                           for a in node.names)
            if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                    and node.value.id == "femcav"):
                assert node.attr in femcav.__all__, f"femcav.{node.attr} is not public"


def test_public_box_and_section_examples_give_the_closed_forms():
    part = femcav.build_part("box", width=0.02286, height=0.01016, length=0.03, mesh_size=0.004)
    result = femcav.solve_model(femcav.make_model(part, {"inside": femcav.Material()}, {}),
                                modes=1, form="H", order=2)
    te101 = c / 2 * math.hypot(1 / 0.02286, 1 / 0.03)
    assert result.modes[0].frequency_hz == pytest.approx(te101, rel=2e-3)
    rows = femcav.mode_rows(result)
    assert rows[0]["frequency_hz"] == result.modes[0].frequency_hz

    section = femcav.mesh_section(
        femcav.builder_layout("pillbox", {"radius": 0.01, "length": 0.015}),
        femcav.Sizing(size=0.002))
    model = femcav.make_axisymmetric_model(section, {"inside": femcav.Material()}, {})
    result = femcav.solve_axisymmetric(model, orders=(0,), modes=1, order=3)
    tm010 = c * jn_zeros(0, 1)[0] / (2 * math.pi * 0.01)
    assert result.modes[0].frequency_hz == pytest.approx(tm010, rel=1e-6)
