"""The dispersion chart of a periodic cell: frequency against phase advance per band, the
light line of the cell length, each band's passband shaded, the 2π/3 and π phases marked."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from scipy.constants import c as C0

from .chart_style import MARKERS, PALETTE


def write_dispersion_chart(document: dict, path: Path) -> None:
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    degrees = document["phases_deg"]
    fig, ax = plt.subplots(figsize=(7.0, 4.6))
    top = 0.0
    for k, band in enumerate(document["bands"]):
        colour, marker = PALETTE[k % len(PALETTE)], MARKERS[k % len(MARKERS)]
        points = [(d, f / 1e9) for d, f in zip(degrees, band["frequency_hz"]) if f is not None]
        if not points:
            continue
        ax.plot(*zip(*points), color=colour, marker=marker, markersize=4, linewidth=1.4,
                label=f"band {band['band']}")
        low, high = min(p[1] for p in points), max(p[1] for p in points)
        ax.axhspan(low, high, color=colour, alpha=0.08, linewidth=0)
        top = max(top, high)
    # the light line: a plane wave in vacuum advancing φ over the cell length, f = cφ/(2πL)
    span = np.linspace(min(degrees), max(degrees), 50)
    light = C0 * np.radians(span) / (2 * math.pi * document["cell_length_m"]) / 1e9
    ax.plot(span, light, color="#777777", linestyle="--", linewidth=1.0, label="light line")
    for mark, text in ((120.0, "2π/3"), (180.0, "π")):
        if min(degrees) <= mark <= max(degrees):
            ax.axvline(mark, color="#999999", linestyle=":", linewidth=1.0)
            ax.annotate(text, (mark, 1.0), xycoords=("data", "axes fraction"),
                        xytext=(3, -12), textcoords="offset points", fontsize=9)
    ax.set_ylim(0, 1.15 * top if top > 0 else None)
    ax.set_xlabel("phase advance per cell (deg)")
    ax.set_ylabel("frequency (GHz)")
    ax.set_title(f"{document['title']}\ncell {document['cell_length_m'] * 1e3:.4g} mm, "
                 "passbands shaded", fontsize=9)
    ax.grid(True, color="#dddddd", linewidth=0.6)
    ax.legend(fontsize=7, ncol=2, frameon=False, loc="lower right")
    fig.tight_layout()
    fig.savefig(path, dpi=110, format="png")
    plt.close(fig)
