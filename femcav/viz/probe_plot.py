"""The line probes of a result folder: |E| and |H| along each line, one curve per mode,
at 1 J stored (probe_NAME.png), drawn from modes.json."""

from __future__ import annotations

from pathlib import Path

from .chart_style import MARKERS, PALETTE
from ..units import format_frequency

SIZE_INCHES = (8.0, 6.2)


def line_probe_names(document: dict) -> list[str]:
    """The names of the line probes that the modes of ``document`` report, in order."""
    names = {}
    for mode in document.get("modes", []):
        for name, probe in (mode.get("probes") or {}).items():
            if probe.get("kind") == "line":
                names[name] = None
    return list(names)


def write_probe_plot(document: dict, name: str, path: Path) -> None:
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, (top, bottom) = plt.subplots(2, 1, figsize=SIZE_INCHES, sharex=True)
    for k, mode in enumerate(m for m in document["modes"] if name in (m.get("probes") or {})):
        probe = mode["probes"][name]
        distance = [d * 1e3 for d in probe["distance_m"]]
        style = dict(color=PALETTE[k % len(PALETTE)], marker=MARKERS[k % len(MARKERS)],
                     markersize=3, linewidth=1.2,
                     label=f"mode {mode['index']}: {format_frequency(mode['frequency_hz'], 6)}")
        top.plot(distance, probe["e_abs_v_per_m"], **style)
        bottom.plot(distance, probe["h_abs_a_per_m"], **style)
    first = next(m["probes"][name] for m in document["modes"] if name in (m.get("probes") or {}))
    start, end = first["points_m"][0], first["points_m"][-1]
    ends = " to ".join("(" + ", ".join(f"{v * 1e3:.4g}" for v in p) + ") mm" for p in (start, end))
    top.set_title(f"probe {name}: {ends}, at 1 J stored", fontsize=10)
    top.set_ylabel("|E| (V/m)")
    bottom.set_ylabel("|H| (A/m)")
    bottom.set_xlabel("distance along the line (mm)")
    for axes in (top, bottom):
        axes.grid(True, color="#dddddd", linewidth=0.6)
    top.legend(fontsize=7, frameon=False, ncol=2, loc="best")
    fig.tight_layout()
    fig.savefig(path, dpi=110, format="png")
    plt.close(fig)
