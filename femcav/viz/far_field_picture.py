"""A radiating mode's pattern (far_field_KK.png), drawn from the result folder's
far_field.csv: directivity in dBi on two polar cuts through the peak direction, the
elevation cut (θ from 0 to 360° in the plane of the peak's φ) and the azimuth cut (φ at the
peak's θ)."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

from .chart_style import PALETTE

SIZE_INCHES = (9.0, 5.6)
# The radial axis spans this many dB below the peak.
RANGE_DB = 30.0


def read_far_fields(folder: Path) -> dict[int, dict[str, np.ndarray]] | None:
    """mode -> {"theta", "phi", "dbi"} (degrees, degrees, dBi; θ fastest), or None when the
    folder has no far_field.csv."""
    path = Path(folder) / "far_field.csv"
    if not path.is_file():
        return None
    columns: dict[int, list] = {}
    with open(path, newline="") as handle:
        for row in csv.DictReader(handle):
            columns.setdefault(int(row["mode"]), []).append(
                (float(row["theta_deg"]), float(row["phi_deg"]), float(row["directivity_dbi"])))
    return {mode: dict(zip(("theta", "phi", "dbi"), np.array(rows).T))
            for mode, rows in columns.items()}


def pattern_cuts(pattern: dict[str, np.ndarray]):
    """((angle°, dBi) of the elevation cut, (angle°, dBi) of the azimuth cut, peak θ, φ)."""
    theta, phi, dbi = pattern["theta"], pattern["phi"], pattern["dbi"]
    k = int(np.argmax(dbi))
    peak_theta, peak_phi = theta[k], phi[k]
    front = np.isclose(phi, peak_phi)
    back = np.isclose(phi, (peak_phi + 180.0) % 360.0)
    elevation_angle = np.concatenate([theta[front], 360.0 - theta[back][::-1]])
    elevation = np.concatenate([dbi[front], dbi[back][::-1]])
    ring = np.isclose(theta, peak_theta)
    return ((elevation_angle, elevation), (phi[ring], dbi[ring]), peak_theta, peak_phi)


def draw_far_field_picture(pattern: dict[str, np.ndarray], title: str, path: Path) -> None:
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    (e_angle, e_dbi), (a_angle, a_dbi), peak_theta, peak_phi = pattern_cuts(pattern)
    top = float(np.max(pattern["dbi"]))
    fig, axes = plt.subplots(1, 2, figsize=SIZE_INCHES, subplot_kw={"projection": "polar"})
    cuts = ((axes[0], e_angle, e_dbi, f"elevation cut, φ = {peak_phi:g}° and {(peak_phi + 180) % 360:g}°"
             " (angle from +z)"),
            (axes[1], a_angle, a_dbi, f"azimuth cut, θ = {peak_theta:g}° (angle from +x)"))
    for (ax, angle, dbi, name), colour in zip(cuts, PALETTE):
        closed = np.append(angle, angle[0] + 360.0)
        values = np.append(dbi, dbi[0])
        ax.plot(np.radians(closed), np.clip(values, top - RANGE_DB, None), color=colour,
                linewidth=1.5)
        ax.set_rlim(top - RANGE_DB, top + 1.0)
        if ax is axes[0]:
            ax.set_theta_zero_location("N")
            ax.set_theta_direction(-1)
        ax.set_title(name, fontsize=9)
        ax.tick_params(labelsize=7)
    fig.suptitle(f"{title}\ndirectivity (dBi), peak {top:.2f} dBi at θ = {peak_theta:g}°, "
                 f"φ = {peak_phi:g}°; radial axis {RANGE_DB:g} dB", fontsize=9)
    fig.tight_layout(rect=(0.0, 0.0, 1.0, 0.86))
    fig.savefig(path, dpi=110, format="png")
    plt.close(fig)
