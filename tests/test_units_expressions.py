import numpy as np
import pytest

from femcav.errors import InputError
from femcav.expressions import Expression
from femcav.units import format_frequency, parse_quantity


@pytest.mark.parametrize("text, kind, si", [
    ("22.86 mm", "length", 0.02286),
    ("1 in", "length", 0.0254),      # 1 inch = 25.4 mm exactly (international inch, 1959)
    ("3 mil", "length", 76.2e-6),    # 1 mil = 0.001 inch (common practice)
    ("9.5 GHz", "frequency", 9.5e9),
    ("4.8GHz", "frequency", 4.8e9),
    ("58 MS/m", "conductivity", 58e6),
    (0.5, "length", 0.5),            # a bare number is SI
])
def test_parse_quantity(text, kind, si):
    assert parse_quantity(text, kind) == pytest.approx(si, rel=1e-12)


@pytest.mark.parametrize("text, kind, message", [
    ("12", "length", "has no unit"),
    ("12 GHz", "length", "unknown length unit"),
    ("fast", "frequency", "cannot read"),
    (True, "length", "true/false"),
])
def test_parse_quantity_refuses(text, kind, message):
    with pytest.raises(InputError, match=message):
        parse_quantity(text, kind, field="geometry.width")


def test_format_frequency():
    assert format_frequency(4.8e9) == "4.8 GHz"
    assert format_frequency(11.4515e6) == "11.4515 MHz"


def test_expression_matches_numpy():
    expr = Expression("1.5 + sin(pi*x/0.02) * exp(-y) + (2 if z > 0.5 else 0)")
    x, y, z = np.linspace(0, 1, 7), np.linspace(1, 2, 7), np.linspace(0, 1, 7)
    expected = 1.5 + np.sin(np.pi * x / 0.02) * np.exp(-y) + np.where(z > 0.5, 2, 0)
    np.testing.assert_allclose(expr(x, y, z), expected, rtol=1e-15)


@pytest.mark.parametrize("text", [
    "__import__('os').system('true')", "x.real", "open('f')", "[1, 2]", "lambda: 1",
    "q + 1", "'text'",
])
def test_expression_refuses_code(text):
    with pytest.raises(InputError, match="not allowed"):
        Expression(text)


def test_expression_syntax_error():
    with pytest.raises(InputError, match="cannot parse"):
        Expression("2 +* x")
