"""Declared builder parameters: what kind of value, whether required, the allowed range."""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError
from ..units import parse_quantity

# The lengths a part may have, in metres. Below MIN_LENGTH gmsh's geometry kernel cannot tell
# a feature from its own tolerance (Geometry.Tolerance, 1e-8 m by default, with a factor 100
# to spare); above MAX_LENGTH no closed microwave part exists, and the element sizes, volumes
# and matrix entries of such a part overflow or lose all their digits long before the solver.
MIN_LENGTH = 1e-6
MAX_LENGTH = 1e3
# A positive length (a radius, a gap) below this share of the part's largest length is
# narrower than the tolerance the builders name walls with (1e-7 of the extent), ten times over.
MIN_SHARE_OF_EXTENT = 1e-6


def checked_length(value: float, field: str, *, positive: bool) -> float:
    """``value`` (metres) if a part can have it: within +-MAX_LENGTH, and at least MIN_LENGTH
    when it is a size that must be positive; InputError naming ``field`` otherwise."""
    if abs(value) > MAX_LENGTH:
        raise InputError(f"{value:.3g} m is beyond the {MAX_LENGTH:g} m femcav takes for any "
                         "length of a part; check the unit", field=field)
    if positive and 0 < abs(value) < MIN_LENGTH:
        raise InputError(f"{value:.3g} m is below the {MIN_LENGTH:g} m femcav takes for a "
                         "dimension of a part; check the unit", field=field)
    return value


@dataclass(frozen=True)
class Param:
    kind: str = "length"          # "length" or "point" (three lengths x, y, z)
    required: bool = True
    default: object = None
    minimum: str = "positive"     # "positive", "nonnegative" or "any"
    doc: str = ""


def parse_params(declared: dict[str, Param], given: dict, where: str) -> dict[str, object]:
    """Parse ``given`` (raw case-file values) against ``declared``; SI floats out."""
    for key in given:
        if key not in declared:
            raise InputError(f"unknown key; this builder takes {', '.join(declared)}",
                             field=f"{where}.{key}")
    out = {}
    for key, param in declared.items():
        field = f"{where}.{key}"
        if key not in given:
            if param.required:
                raise InputError("missing; this builder needs it", field=field)
            out[key] = param.default
            continue
        if param.kind == "point":
            raw = given[key]
            if not isinstance(raw, list) or len(raw) != 3:
                raise InputError('must be a list of three lengths, e.g. ["1 mm", "0 mm", "2 mm"]',
                                 field=field)
            out[key] = tuple(parse_quantity(v, "length", field=f"{field}[{i}]")
                             for i, v in enumerate(raw))
            values = out[key]
        else:
            out[key] = parse_quantity(given[key], "length", field=field)
            values = (out[key],)
        if param.minimum == "positive" and not all(v > 0 for v in values):
            raise InputError(f"must be positive, got {given[key]!r}", field=field)
        if param.minimum == "nonnegative" and not all(v >= 0 for v in values):
            raise InputError(f"must not be negative, got {given[key]!r}", field=field)
        for i, v in enumerate(values):
            try:
                checked_length(v, f"{field}[{i}]" if param.kind == "point" else field,
                               positive=_is_dimension(param))
            except InputError as exc:
                raw = given[key][i] if param.kind == "point" else given[key]
                if isinstance(raw, (int, float)) and not isinstance(raw, bool):
                    # a bare number is metres: say so, with the unit most likely meant
                    exc = InputError(f"{exc.message} (the bare number {raw:g} is read as "
                                     f"{raw:g} m; write \"{raw:g} mm\" or \"{raw:g} um\" if "
                                     "that was meant)", field=exc.field)
                raise exc from None
    check_proportions({key: out[key] for key in given}, declared, where)
    return out


def _is_dimension(param: Param) -> bool:
    """A size (a radius, a depth, a gap), not a coordinate: it must not be tiny unless zero."""
    return param.kind == "length" and param.minimum in ("positive", "nonnegative")


def check_proportions(values: dict[str, object], declared: dict[str, Param], where: str) -> None:
    """Refuse a dimension so small beside the largest length that gmsh cannot resolve it."""
    lengths = [abs(v) for value in values.values() if value is not None
               for v in (value if isinstance(value, tuple) else (value,))]
    largest = max(lengths, default=0.0)
    for key, value in values.items():
        if _is_dimension(declared[key]) and value:
            check_share(value, largest, f"{where}.{key}")


def check_share(value: float, largest: float, field: str) -> None:
    """InputError when the dimension ``value`` is below MIN_SHARE_OF_EXTENT of ``largest``."""
    if value < MIN_SHARE_OF_EXTENT * largest:
        raise InputError(f"{value:.3g} m is below {MIN_SHARE_OF_EXTENT:g} of the part's largest "
                         f"length ({largest:.3g} m): too small to mesh", field=field)


def require(condition: bool, message: str, field: str) -> None:
    """Refuse parameters that are each valid but do not fit together."""
    if not condition:
        raise InputError(message, field=field)


def moved_parameters(parameters: dict, name: str, delta: float) -> dict:
    """``parameters`` with the length ``name`` ("radius", or "block_corner[0]" for one
    coordinate of a point) moved by ``delta`` metres."""
    key, _, index = name.partition("[")
    moved = dict(parameters)
    if index:
        point = list(moved[key])
        point[int(index[:-1])] += delta
        moved[key] = tuple(point)
    else:
        moved[key] = moved[key] + delta
    return moved
