"""Unit strings in, SI floats out; SI floats in, readable strings out.

A quantity is a number followed by a unit from the explicit tables below ("22.86 mm",
"9.5 GHz", "58 MS/m"); a bare number (int or float, not a string) is taken as SI, as the
case-file reference says. Nothing else is accepted: a string without a unit, or with a unit of
the wrong kind, is an error rather than a guess.

We keep our own small tables instead of a general units library: the set of quantities a
cavity case needs is small, and a general library reads some engineering words differently
from the trade (for example "mil" as an angle instead of a thousandth of an inch).
"""

from __future__ import annotations

import math
import re

from .errors import InputError

_PREFIXES = {"T": 1e12, "G": 1e9, "M": 1e6, "k": 1e3, "": 1.0, "m": 1e-3, "u": 1e-6,
             "µ": 1e-6, "μ": 1e-6, "n": 1e-9, "p": 1e-12}


def _with_prefixes(base: str, prefixes: str) -> dict[str, float]:
    return {p + base: _PREFIXES[p] for p in [""] + list(prefixes)}


# kind -> {unit spelling: factor to SI}
UNITS: dict[str, dict[str, float]] = {
    "length": {
        **_with_prefixes("m", "kmuµμnp"),
        "cm": 1e-2,
        "in": 0.0254, "inch": 0.0254, "mil": 25.4e-6, "thou": 25.4e-6, "ft": 0.3048,
    },
    "frequency": _with_prefixes("Hz", "TGMk"),
    "conductivity": _with_prefixes("S/m", "GMk"),
    # surface resistances of metal walls, from normal metals (mohm) to superconductors (nohm)
    "resistance": {**_with_prefixes("ohm", "kmuµμn"), **_with_prefixes("Ω", "kmuµμn")},
    "temperature": _with_prefixes("K", "m"),
    # the phase advance of a periodic cell
    "angle": {"rad": 1.0, "mrad": 1e-3, "deg": math.pi / 180, "°": math.pi / 180},
    # per kelvin: temperature coefficients and thermal expansion
    "temperature_coefficient": {"/K": 1.0, "ppm/K": 1e-6, "ppb/K": 1e-9},
}

LENGTH_UNITS = UNITS["length"]
SI_NAME = {"length": "m", "frequency": "Hz", "conductivity": "S/m", "resistance": "ohm",
           "temperature": "K", "angle": "rad", "temperature_coefficient": "/K"}

_QUANTITY = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([^\s\d].*?)?\s*$")


def parse_quantity(value: object, kind: str, *, field: str | None = None) -> float:
    """Return ``value`` in SI units; ``kind`` is a key of :data:`UNITS`."""
    table = UNITS[kind]
    if isinstance(value, bool):
        raise InputError(f"expected a {kind}, got a true/false value", field=field)
    if isinstance(value, (int, float)):
        try:
            number = float(value)
        except OverflowError:       # an integer beyond float
            number = math.inf
    elif isinstance(value, str):
        match = _QUANTITY.match(value)
        if not match:
            raise InputError(f"cannot read {value!r} as a {kind}; write a number and a unit, "
                             f"e.g. {_example(kind)!r}", field=field)
        number_text, unit = match.groups()
        if not unit:
            raise InputError(f"{value!r} has no unit; write e.g. {_example(kind)!r}, or a bare "
                             f"number (not a string) for {SI_NAME[kind]}", field=field)
        if unit not in table:
            raise InputError(f"unknown {kind} unit {unit!r} in {value!r}; known units: "
                             f"{', '.join(sorted(table, key=table.get))}", field=field)
        number = float(number_text) * table[unit]
    else:
        raise InputError(f"expected a {kind} such as {_example(kind)!r}, got "
                         f"{type(value).__name__}", field=field)
    if not math.isfinite(number):
        raise InputError(f"{value!r} is not a finite {kind}", field=field)
    return number


def _example(kind: str) -> str:
    return {"length": "12.5 mm", "frequency": "4.8 GHz", "conductivity": "58 MS/m",
            "resistance": "10 nohm", "temperature": "2 K", "angle": "120 deg",
            "temperature_coefficient": "110 ppm/K"}[kind]


def format_si(value: float, unit: str, digits: int = 6) -> str:
    """``value`` with an engineering prefix: format_si(4.8e9, "Hz") -> '4.8 GHz'."""
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}"
    exponent = int(math.floor(math.log10(abs(value)) / 3) * 3)
    exponent = max(-12, min(12, exponent))
    prefix = {12: "T", 9: "G", 6: "M", 3: "k", 0: "", -3: "m", -6: "µ", -9: "n", -12: "p"}
    return f"{value / 10 ** exponent:.{digits}g} {prefix[exponent]}{unit}"


def format_frequency(hz: float, digits: int = 8) -> str:
    return format_si(hz, "Hz", digits)


def format_length(metres: float, digits: int = 6) -> str:
    return format_si(metres, "m", digits)
