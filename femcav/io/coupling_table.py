"""The coupling coefficients of a result as lines under the mode table (terminal,
table.txt and the report): one line per pair, with both frequencies and the source."""

from __future__ import annotations

from ..units import format_frequency

SIGN_NOTE = ("k = (f_a² − f_b²)/(f_a² + f_b²); symmetry pairs: a = magnetic-wall (PMC) class, "
             "b = electric-wall (PEC) class, k < 0 for magnetic coupling; named pair [i, j]: "
             "a = mode j, b = mode i")


def coupling_lines(coupling) -> list[str]:
    """Text lines for the CouplingCoefficients ``coupling`` (none: no lines)."""
    if not coupling:
        return []
    lines = ["", "coupling coefficients (" + SIGN_NOTE + ")",
             f"{'modes':>8}  {'k':>11}  {'f_a':>16}  {'f_b':>16}  source"]
    for c in coupling:
        f_a, f_b = ((c.f_second_hz, c.f_first_hz) if c.source == "named modes"
                    else (c.f_first_hz, c.f_second_hz))
        pair = f"{c.modes[0]}, {c.modes[1]}"
        lines.append(f"{pair:>8}  {c.k:>11.5g}  {format_frequency(f_a, 9):>16}  "
                     f"{format_frequency(f_b, 9):>16}  {c.source}")
    return lines
