"""The mode chart of a sweep: frequency against the first parameter, one curve per tracked
mode, and Q on a second panel when the case has losses.

Our own look: the colour-blind-safe qualitative palette of M. Okabe and K. Ito ("Color
Universal Design", 2002; eight colours), markers at the solved points, a marker shape per
track as a second cue, units on both axes. Without a display (matplotlib's Agg backend).
"""

from __future__ import annotations

from pathlib import Path

from ..viz.chart_style import MARKERS, PALETTE


def write_mode_chart(document: dict, path: Path) -> None:
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    first = document["parameters"][0]
    scale, unit = (1e3, "mm") if first["unit"] == "m" else (1.0, first["unit"])
    x_all = [v * scale for v in first["values"]]
    tracks = document["tracks"]
    has_q = any(q is not None for t in tracks for q in t["q_total"])
    fig, axes = plt.subplots(2 if has_q else 1, 1, figsize=(7.5, 6.5 if has_q else 4.2),
                             sharex=True, squeeze=False)
    freq_ax = axes[0, 0]
    for k, t in enumerate(tracks):
        colour, marker = PALETTE[k % len(PALETTE)], MARKERS[k % len(MARKERS)]
        label = f"mode {t['track']}" + (f", 2nd = {t['second_value']:.4g}"
                                        if "second_value" in t else "")
        pts = [(x, f / 1e9) for x, f in zip(x_all, t["frequency_hz"]) if f is not None]
        if pts:
            freq_ax.plot(*zip(*pts), color=colour, marker=marker, markersize=4, linewidth=1.4,
                         label=label)
        if has_q:
            qs = [(x, q) for x, q in zip(x_all, t["q_total"]) if q is not None]
            if qs:
                axes[1, 0].plot(*zip(*qs), color=colour, marker=marker, markersize=4,
                                linewidth=1.4)
    freq_ax.set_ylabel("frequency (GHz)")
    freq_ax.grid(True, color="#dddddd", linewidth=0.6)
    freq_ax.legend(fontsize=7, ncol=2, frameon=False)
    freq_ax.set_title("tracked modes (by field overlap)", fontsize=10)
    if has_q:
        axes[1, 0].set_ylabel("Q (unloaded)")
        axes[1, 0].set_yscale("log")
        axes[1, 0].grid(True, color="#dddddd", linewidth=0.6)
    axes[-1, 0].set_xlabel(f"{first['parameter']} ({unit})" if unit else first["parameter"])
    fig.tight_layout()
    fig.savefig(path, dpi=110, format="png")
    plt.close(fig)
