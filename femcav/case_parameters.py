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
import re
from dataclasses import dataclass

import numpy as np

from .errors import InputError
from .schema import MAX_STUDY_VALUES, SWEEP_AXIS, VARIED, check_table, parse_value, read
from .units import format_length, format_si

_PATH = re.compile(r"^(geometry)\.(\w+)(?:\[([012])\])?$|^(regions)\.(\w+)\.(eps_r|mu_r|tan_delta)$"
                   r"|^(walls)\.(\w+)\.(conductivity)$")
KINDS = {"eps_r": "number", "mu_r": "number", "tan_delta": "number",
         "conductivity": "conductivity"}
UNITS = {"length": "m", "number": "", "conductivity": "S/m"}
MAX_VALUES = MAX_STUDY_VALUES   # (the schema refuses more, before any list is made)


@dataclass(frozen=True)
class Axis:
    """One varied parameter and its values (SI)."""

    path: str
    values: tuple[float, ...]
    kind: str                   # "length", "number" or "conductivity"
    # the case-file key each value comes from (sweep.values[2], sweep.from, sweep, ...), for
    # messages about a point that is refused
    origins: tuple[str, ...] = ()
    where: str = ""             # the study table that declares the axis ("sweep", "tune")

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


def varied_value(path: str, raw, field: str) -> float:
    """A value for the parameter ``path``, checked against the declaration of the key it
    goes to (femcav.schema: eps_r within its range, a conductivity with its unit, ...)."""
    name = path.rsplit(".", 1)[-1]
    return parse_value(raw, VARIED.get(name, VARIED["length"]), field)


def parse_axis(spec: dict, where: str) -> Axis:
    """``{parameter = "...", from = ..., to = ..., points = N}`` or ``{parameter = "...",
    values = [...]}``; quantities with units as elsewhere in the case file."""
    check_table(spec, SWEEP_AXIS, where)
    if "parameter" not in spec:
        raise InputError("missing: the parameter to vary, e.g. \"geometry.radius\"",
                         field=f"{where}.parameter")
    path = spec["parameter"]
    kind = parameter_kind(path, f"{where}.parameter")

    def value(raw, field):
        return varied_value(path, raw, field)

    if "values" in spec:
        if any(k in spec for k in ("from", "to", "points")):
            raise InputError("give either values or from, to and points", field=where)
        raw = spec["values"]
        if not raw:
            raise InputError("must be a non-empty list", field=f"{where}.values")
        origins = tuple(f"{where}.values[{i}]" for i in range(len(raw)))
        values = tuple(value(v, field) for v, field in zip(raw, origins))
    else:
        missing = [k for k in ("from", "to", "points") if k not in spec]
        if missing:
            raise InputError(f"missing {', '.join(missing)} (or give values = [...])",
                             field=where)
        points = read(spec, "points", SWEEP_AXIS, where)
        lo, hi = value(spec["from"], f"{where}.from"), value(spec["to"], f"{where}.to")
        values = tuple(float(v) for v in np.linspace(lo, hi, points))
        origins = (f"{where}.from", *[where] * (points - 2), f"{where}.to")
    if len(set(values)) != len(values):
        raise InputError("lists a value twice", field=where)
    return Axis(path=path, values=values, kind=kind, origins=origins, where=where)


def check_parameter_exists(axis: Axis, case) -> None:
    """A builder length that the base case's builder has (a region or wall property may name
    a table the case leaves out: the study writes it in)."""
    field = f"{axis.where}.parameter"
    match = _PATH.match(axis.path)
    if match.group(4):
        check_scalar_material(case, match.group(5), match.group(6), field)
    if not match.group(1):
        return
    builder = case.geometry.builder
    if builder is None:
        raise InputError("an imported mesh has no builder lengths to vary", field=field)
    from .geometry import BUILDERS

    declared = BUILDERS[builder].PARAMETERS
    name, index = match.group(2), match.group(3)
    if name not in declared:
        raise InputError(f"{builder} has no length {name!r}; this builder takes "
                         f"{', '.join(declared) or 'no lengths'}", field=field)
    if (declared[name].kind == "point") != (index is not None):
        raise InputError("a point's coordinate is named NAME[0], NAME[1] or NAME[2]; a length "
                         "by its name", field=field)


def check_scalar_material(case, region: str, key: str, field: str) -> None:
    """A number replaces the region's value: refused where that value is a tensor (a
    uniaxial crystal would silently become isotropic)."""
    material = case.regions.get(region)
    tensor = {"eps_r": "eps_tensor", "mu_r": "mu_tensor"}.get(key)
    if material is not None and tensor and getattr(material, tensor) is not None:
        raise InputError(f"regions.{region}.{key} is a tensor; a study varies one number and "
                         "would make it isotropic", field=field)


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
