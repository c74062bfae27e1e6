"""JSON text that strict parsers read: a number that is not finite is written as null.

Python's json module writes NaN and Infinity as bare tokens that are not JSON (RFC 8259,
section 6), and many parsers (JavaScript's JSON.parse, jq, Go, Rust's serde_json) reject the
whole file for one of them. A failed mode may carry a NaN frequency or residual; its
document must still load everywhere, with null where no number could be given.
"""

from __future__ import annotations

import json
import math

import numpy as np


def finite_or_null(value):
    """``value`` with every non-finite float (at any depth) replaced by None; numpy scalars
    and arrays become plain Python numbers and lists."""
    if isinstance(value, dict):
        return {key: finite_or_null(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [finite_or_null(item) for item in value]
    if isinstance(value, np.ndarray):
        return finite_or_null(value.tolist())
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def dumps(document, *, indent: int | None = None) -> str:
    """``document`` as strict JSON text, ending with a newline."""
    return json.dumps(finite_or_null(document), indent=indent, allow_nan=False) + "\n"
