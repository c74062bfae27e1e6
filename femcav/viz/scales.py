"""Colour and arrow scales that follow the field where it is, not where it is singular.

At a metal edge or a re-entrant corner the field of a mode grows without bound (like
r^(-1/3) beside a right-angled edge, common practice), and the finite-element field there
takes whatever large value its smallest elements allow. A scale topped at the largest value
then paints the rest of the part near the bottom of the colour map. The scale here tops at
the SCALE_PERCENTILE-th percentile of the magnitude weighted by cell volume (or face area):
the value that all but (100 - SCALE_PERCENTILE) % of the part's volume stays under, with
HEADROOM above it, or at the largest value where that is lower (a smooth field, whose peak
is then not flattened). The small, graded cells at singular edges hold little volume, so
they no longer set it; the cells above it are drawn in the top colour, and the colour bar
says so.
"""

from __future__ import annotations

import numpy as np

SCALE_PERCENTILE = 99.0
# a smooth field's maximum is within a few per cent of its 99th percentile by volume (a
# pillbox's TM010), a singular one's many times above it: the scale keeps the maximum when
# it is within this factor
HEADROOM = 1.2


def clipped_top(values: np.ndarray, weights: np.ndarray,
                percentile: float = SCALE_PERCENTILE) -> float:
    """HEADROOM times the weighted ``percentile`` of ``values`` (weights: cell volumes or
    face areas), or their maximum if lower; a positive number even for a zero field."""
    values = np.asarray(values, dtype=float).ravel()
    weights = np.abs(np.asarray(weights, dtype=float).ravel())
    if values.size == 0 or not np.any(weights > 0):
        return float(np.max(values, initial=0.0)) or 1.0
    order = np.argsort(values)
    cumulative = np.cumsum(weights[order])
    k = int(np.searchsorted(cumulative, percentile / 100.0 * cumulative[-1]))
    top = min(HEADROOM * float(values[order][min(k, values.size - 1)]), float(values.max()))
    return top if top > 0 else (float(values.max()) or 1.0)


def scale_note(percentile: float = SCALE_PERCENTILE, what: str = "volume") -> str:
    """The colour bar's words for the clipping."""
    return (f"scale tops at {HEADROOM:g} x the {percentile:g}th percentile by {what} or at "
            "the maximum if lower; higher values in the top colour")


def colour_bar(quantity: str, what: str = "volume", ink: str = "#1E2328") -> dict:
    """pyvista scalar-bar arguments: ``quantity`` (with its unit) over the clipping note,
    horizontal under the picture."""
    return {"title": f"{quantity}\n{scale_note(what=what)}", "color": ink, "fmt": "%.3g",
            "vertical": False, "position_x": 0.12, "position_y": 0.03, "width": 0.76,
            "height": 0.1, "title_font_size": 13, "label_font_size": 12}


def labels_under_bars(plotter) -> None:
    """Put the numbers of every colour bar of ``plotter`` under the bar, away from its
    two-line title."""
    for actor in plotter.scalar_bars.values():
        actor.SetTextPositionToPrecedeScalarBar()
