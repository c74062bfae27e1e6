"""The case-file quantities a study may vary, and the values it gives them.

A parameter is named by its place in the case file: ``geometry.NAME`` (a builder length),
``geometry.NAME[i]`` (one coordinate of a point such as a block corner), or
``regions.NAME.eps_r`` / ``.mu_r`` / ``.tan_delta``, or ``walls.NAME.conductivity``. A study
writes the value (SI) into a copy of the raw case tables and validates the whole case again,
so every point is checked like a case of its own (a puck that reaches the lid is refused
with the usual message).
"""

from __future__ import annotations

import copy
import math
import re
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..units import format_length, format_si, parse_quantity

_PATH = re.compile(r"^(geometry)\.(\w+)(?:\[(\d)\])?$|^(regions)\.(\w+)\.(eps_r|mu_r|tan_delta)$"
                   r"|^(walls)\.(\w+)\.(conductivity)$")
KINDS = {"eps_r": "number", "mu_r": "number", "tan_delta": "number",
         "conductivity": "conductivity"}
UNITS = {"length": "m", "number": "", "conductivity": "S/m"}
# The most values one parameter may take (each is a solve): refused before any list of
# values is made, so that a typo such as points = 1000000000 costs nothing.
MAX_VALUES = 10_000


@dataclass(frozen=True)
class Axis:
    """One varied parameter and its values (SI)."""

    path: str
    values: tuple[float, ...]
    kind: str                   # "length", "number" or "conductivity"

    @property
    def unit(self) -> str:
        return UNITS[self.kind]

    def label(self) -> str:
        return f"{self.path} ({self.unit})" if self.unit else self.path


def parameter_kind(path: str, where: str) -> str:
    match = _PATH.match(path) if isinstance(path, str) else None
    if not match:
        raise InputError(f"cannot vary {path!r}; name a builder length (geometry.radius, "
                         "geometry.block_corner[0]), regions.NAME.eps_r / mu_r / tan_delta "
                         "or walls.NAME.conductivity", field=where)
    if match.group(1):
        return "length"
    return KINDS[match.group(6) or match.group(9)]


def parse_axis(spec: dict, where: str) -> Axis:
    """``{parameter = "...", from = ..., to = ..., points = N}`` or ``{parameter = "...",
    values = [...]}``; quantities with units as elsewhere in the case file."""
    if not isinstance(spec, dict):
        raise InputError("must be a table with parameter and values (or from, to, points)",
                         field=where)
    allowed = {"parameter", "values", "from", "to", "points"}
    for key in spec:
        if key not in allowed:
            raise InputError(f"unknown key; allowed here: {', '.join(sorted(allowed))}",
                             field=f"{where}.{key}")
    if "parameter" not in spec:
        raise InputError("missing: the parameter to vary, e.g. \"geometry.radius\"",
                         field=f"{where}.parameter")
    path = spec["parameter"]
    kind = parameter_kind(path, f"{where}.parameter")

    def value(raw, field):
        if kind == "number":
            if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw):
                raise InputError(f"must be a number, got {raw!r}", field=field)
            return float(raw)
        return parse_quantity(raw, kind, field=field)

    if "values" in spec:
        if any(k in spec for k in ("from", "to", "points")):
            raise InputError("give either values or from, to and points", field=where)
        raw = spec["values"]
        if not isinstance(raw, list) or not raw:
            raise InputError("must be a non-empty list", field=f"{where}.values")
        if len(raw) > MAX_VALUES:
            raise InputError(f"{len(raw)} values; at most {MAX_VALUES} per parameter",
                             field=f"{where}.values")
        values = tuple(value(v, f"{where}.values[{i}]") for i, v in enumerate(raw))
    else:
        missing = [k for k in ("from", "to", "points") if k not in spec]
        if missing:
            raise InputError(f"missing {', '.join(missing)} (or give values = [...])",
                             field=where)
        points = spec["points"]
        if isinstance(points, bool) or not isinstance(points, int) or points < 2:
            raise InputError(f"must be a whole number >= 2, got {points!r}",
                             field=f"{where}.points")
        if points > MAX_VALUES:
            raise InputError(f"{points} points; at most {MAX_VALUES} per parameter",
                             field=f"{where}.points")
        lo, hi = value(spec["from"], f"{where}.from"), value(spec["to"], f"{where}.to")
        values = tuple(float(v) for v in np.linspace(lo, hi, points))
    if len(set(values)) != len(values):
        raise InputError("lists a value twice", field=where)
    return Axis(path=path, values=values, kind=kind)


def with_value(data: dict, path: str, value: float) -> dict:
    """A deep copy of the raw case tables with ``path`` set to ``value`` (SI)."""
    out = copy.deepcopy(data)
    match = _PATH.match(path)
    if match.group(1):
        table = out.setdefault("geometry", {})
        name, index = match.group(2), match.group(3)
        if index is None:
            table[name] = value
        else:
            point = table.get(name)
            if not isinstance(point, list) or len(point) != 3:
                raise InputError(f"geometry.{name} must be given as a list of three lengths "
                                 "to vary one of them", field=f"geometry.{name}")
            point = list(point)
            point[int(index)] = value
            table[name] = point
    elif match.group(4):
        out.setdefault("regions", {}).setdefault(match.group(5), {})[match.group(6)] = value
    else:
        wall = out.setdefault("walls", {}).setdefault(match.group(8), {})
        wall.pop("metal", None)                       # a conductivity replaces a preset
        wall.setdefault("kind", "metal")
        wall["conductivity"] = value
    return out


def format_value(axis: Axis, value: float) -> str:
    if axis.kind == "length":
        return format_length(value)
    if axis.kind == "conductivity":
        return format_si(value, "S/m", 6)
    return f"{value:.6g}"
