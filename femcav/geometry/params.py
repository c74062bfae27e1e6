"""Declared builder parameters: what kind of value, whether required, the allowed range."""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import InputError
from ..units import parse_quantity


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
    return out


def require(condition: bool, message: str, field: str) -> None:
    """Refuse parameters that are each valid but do not fit together."""
    if not condition:
        raise InputError(message, field=field)
