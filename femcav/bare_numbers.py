"""Warnings for bare numbers in [geometry] that make an unlikely part.

A bare number is SI (metres), which is right for a script and a trap for a hand-written
case: ``width = 22.86`` solves a box 22.86 m wide, at megahertz, without a word. No closed
microwave part femcav is made for is larger than LARGEST_PART_M or smaller than
SMALLEST_PART_M, so a part outside that, with a bare number among its lengths, gets one
warning per bare number naming the unit it was read in. Lengths written with a unit are the
user's explicit choice and are not warned about.
"""

from __future__ import annotations

LARGEST_PART_M = 10.0
SMALLEST_PART_M = 1e-6


def bare_numbers(value, path: str):
    """(key path, number) of every bare number in a raw case value (tables, lists)."""
    if isinstance(value, bool):
        return
    if isinstance(value, (int, float)):
        yield path, value
    elif isinstance(value, dict):
        for key, item in value.items():
            yield from bare_numbers(item, f"{path}.{key}")
    elif isinstance(value, list):
        for i, item in enumerate(value):
            yield from bare_numbers(item, f"{path}[{i}]")


def bare_number_warnings(given: dict, extent_m: float, where: str = "geometry"
                         ) -> tuple[str, ...]:
    """One warning per bare number of the raw [geometry] table ``given`` when the part's
    largest extent ``extent_m`` is beyond the sizes a part has; () otherwise."""
    if SMALLEST_PART_M <= extent_m <= LARGEST_PART_M:
        return ()
    size = (f"larger than {LARGEST_PART_M:g} m" if extent_m > LARGEST_PART_M
            else f"smaller than {SMALLEST_PART_M * 1e6:g} µm")
    hint = "mm" if extent_m > LARGEST_PART_M else "um"
    return tuple(
        f"{path} = {number:g} is read as {number:g} m (a bare number is metres), which makes "
        f"the part {size} ({extent_m:.3g} m across); write \"{number:g} {hint}\" if "
        f"{'millimetres' if hint == 'mm' else 'micrometres'} were meant"
        for key, item in given.items() for path, number in bare_numbers(item, f"{where}.{key}"))
