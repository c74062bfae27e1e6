"""The spectrum of a result folder: every mode on a frequency axis, coloured by its class,
at its Q where the case has losses (or radiates: an open problem); and the count of modes below f against the Weyl
estimate, a check that no mode is missing or spurious.

Weyl's law for the electromagnetic modes of a cavity (both polarisations): the number of
modes below wavenumber k is N(k) ≈ V k³ / (3π²), with V the volume (H. Weyl, 1912; see
also H. P. Baltes and E. R. Hilf, Spectra of Finite Systems, 1976; from memory); in a
dielectric, V becomes ∫ (ε_r μ_r)^(3/2) dV. It is the leading term only: the count of a
real part stays near it, mostly below (the next terms depend on the edges; a box's closed
form gives 0.63 to 1.02 of it from its 6th to its 120th mode), so the check is a curve to
compare with: a count far above it means spurious modes, far below it missing ones.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from scipy.constants import c as C0

from .chart_style import MARKERS, PALETTE

SIZE_INCHES = (8.0, 6.2)


def weyl_count(frequency_hz: np.ndarray, optical_volume_m3: float) -> np.ndarray:
    k = 2 * math.pi * np.asarray(frequency_hz) / C0
    return optical_volume_m3 * k**3 / (3 * math.pi**2)


def mode_class(row: dict) -> str:
    if row.get("azimuthal_order") is not None:
        return f"m = {row['azimuthal_order']} {row['field_class']}"
    return row.get("symmetry") or row.get("label") or "unclassified"


# Below this many modes (pairs counted twice) the count is too far from the leading term of
# Weyl's law for the comparison to say anything: a box's exact count is at 0.63 of it at
# its 6th mode (the module docstring), and the first few modes' places are set by the shape.
MIN_MODES_FOR_WEYL = 10


def weyl_not_meaningful(document: dict, counted: int) -> str:
    """Why the Weyl comparison would mislead for this result ("" when it is meaningful):
    too few modes, modes near a frequency rather than the lowest, or only some azimuthal
    orders solved (the count then misses whole families)."""
    weyl = document.get("weyl") or {}
    if not weyl.get("optical_volume_m3"):
        return "no optical volume in modes.json"
    if (document.get("request") or {}).get("near_hz") is not None:
        return "the modes were asked near a frequency, so the count does not start at zero"
    if weyl.get("listed_share") is None:
        return (f"{weyl.get('note') or 'not every mode family was solved'}, so the count "
                "leaves out the others")
    if counted < MIN_MODES_FOR_WEYL:
        return (f"{counted} modes are too few (it is a large-count law; ask for at least "
                f"{MIN_MODES_FOR_WEYL} modes)")
    return ""


def _unloaded_q(row: dict) -> float | None:
    """Q total (with radiation in it, post.radiation), or for an open part without other
    loss its radiation Q."""
    return row.get("q_total") or row.get("q_radiation")


def write_spectrum(document: dict, path: Path) -> None:
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    modes = document["modes"]
    f = np.array([m["frequency_hz"] for m in modes]) / 1e9
    classes = list(dict.fromkeys(mode_class(m) for m in modes))
    has_q = any(_unloaded_q(m) for m in modes)
    fig, (top, bottom) = plt.subplots(2, 1, figsize=SIZE_INCHES, sharex=True,
                                      gridspec_kw={"height_ratios": (1, 1.2)})
    for k, name in enumerate(classes):
        rows = [m for m in modes if mode_class(m) == name]
        x = [m["frequency_hz"] / 1e9 for m in rows]
        y = [_unloaded_q(m) or 1.0 for m in rows] if has_q else [1.0] * len(rows)
        top.scatter(x, y, color=PALETTE[k % len(PALETTE)], marker=MARKERS[k % len(MARKERS)],
                    s=36, label=name, zorder=3, clip_on=False)
        top.vlines(x, 0 if not has_q else min(y) / 3, y, color=PALETTE[k % len(PALETTE)],
                   linewidth=0.8, alpha=0.6)
    if has_q:
        top.set_yscale("log")
        top.set_ylabel("Q (unloaded)")
        qs = [_unloaded_q(m) or 1.0 for m in modes]
        # a factor 3 of room above and below, so that no marker is cut by the frame
        top.set_ylim(min(qs) / 3, max(qs) * 3)
    else:
        top.set_yticks([])
    top.legend(fontsize=7, frameon=False, ncol=2)
    top.set_title(f"{document.get('title', '')}: {len(modes)} modes", fontsize=10)
    top.grid(True, color="#dddddd", linewidth=0.6)

    multiplicity = np.array([m.get("multiplicity", 1) for m in modes])
    counted = np.cumsum(multiplicity)
    bottom.step(f, counted, where="post", color=PALETTE[0], label="modes solved (with pairs)")
    weyl = document.get("weyl") or {}
    why_not = weyl_not_meaningful(document, int(counted[-1]) if counted.size else 0)
    if why_not:
        bottom.text(0.02, 0.75, f"Weyl's estimate not drawn: {why_not}",
                    transform=bottom.transAxes, fontsize=7, wrap=True)
    elif weyl.get("optical_volume_m3"):
        grid = np.linspace(0, f.max() * 1.02, 200)
        share = weyl.get("listed_share") or 1.0
        bottom.plot(grid, share * weyl_count(grid * 1e9, weyl["optical_volume_m3"]),
                    color=PALETTE[1], linestyle="--",
                    label="Weyl estimate V k³ / 3π²" + (f" x {share:g}" if share != 1 else ""))
    bottom.set_xlabel("frequency (GHz)")
    bottom.set_ylabel("number of modes below f")
    bottom.legend(fontsize=8, frameon=False, loc="upper left" if not why_not
                  else "center left")
    bottom.grid(True, color="#dddddd", linewidth=0.6)
    fig.tight_layout()
    fig.savefig(path, dpi=110, format="png")
    plt.close(fig)
