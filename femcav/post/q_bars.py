"""Error bars on the Q factors, from the same mesh sequence and the same mode matching as the
frequency bars (post.error_estimate): each Q of a mode of the finest mesh is followed through
its matched partners on the coarser meshes and extrapolated by post.richardson like a
frequency, a degenerate cluster by its mean (the members of a degenerate pair share their Q
up to mesh noise, which the bar adds as their distance from the mean on the finest mesh).

The rate assumed when the observed one is not trusted is the frequency's, except for a wall
Q of the E form: there H is the curl of the unknown, one order less accurate at the wall, and
the wall Q converges only half as fast (README, "Worked example": pillbox TM010, rates 2.9
and 0.7 in the E form against about 2 in the H form). A part with field singularities
(post.singularity) gets half the singular rate for every Q too: the loss and energy integrals
are weighted towards the edge where the field grows without bound, and on the calibration set
(benchmarks/error_bar_calibration.py) the re-entrant cavity's 3D wall Q missed all its bars
at the singular rate itself.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .mode_matching import clusters
from .richardson import extrapolate
from .singularity import SINGULAR_RATE

# The Q factors of a LossReport that get a bar (its fields; q_total is extrapolated as a
# quantity of its own rather than combined from the others' bars).
Q_FIELDS = ("q_wall", "q_dielectric", "q_magnetic", "q_total")


@dataclass(frozen=True)
class QEstimate:
    value: float                 # on the finest mesh
    error: float                 # the bar on value
    extrapolated: float          # Richardson's value at zero mesh size


def q_rate(quantity: str, form: str, order_rate: float) -> float:
    """The theoretical rate of ``quantity``'s error (see the module's note)."""
    slower = (quantity == "q_wall" and form == "E") or order_rate <= SINGULAR_RATE
    return order_rate / 2.0 if slower else order_rate


def _q_of(mode, quantity: str) -> float | None:
    loss = getattr(mode, "losses", None)
    value = getattr(loss, quantity, None) if loss is not None else None
    return float(value) if value is not None and np.isfinite(value) else None


def estimate_q_bars(results, partners, sizes: np.ndarray, *, order_rate: float,
                    degenerate_rtol: float) -> list[dict[str, QEstimate]]:
    """Per mode of the finest result (results and sizes coarse to fine; ``partners[k][j]``
    the position of finest mode j among mesh k's modes, -1 when unmatched), its Q bars by
    LossReport field; a Q missing on a mesh leaves that mesh out, fewer than two meshes
    leave the Q without a bar."""
    finest = results[-1]
    fine_hz = np.array([m.frequency_hz for m in finest.modes])
    form = getattr(finest, "form", "H")
    out: list[dict[str, QEstimate]] = [{} for _ in finest.modes]

    def value(k: int, j: int, quantity: str) -> float | None:
        if k == len(results) - 1:
            return _q_of(finest.modes[j], quantity)
        p = int(partners[k][j])
        return None if p < 0 else _q_of(results[k].modes[p], quantity)

    for group in clusters(fine_hz, degenerate_rtol):
        for quantity in Q_FIELDS:
            table = [[value(k, j, quantity) for j in group] for k in range(len(results))]
            use = [k for k, row in enumerate(table) if all(v is not None for v in row)]
            if len(use) < 2 or use[-1] != len(results) - 1:
                continue
            mean = [float(np.mean(table[k])) for k in use]
            x = extrapolate(sizes[use], mean, order_rate=q_rate(quantity, form, order_rate))
            for position, j in enumerate(group):
                own = table[-1][position]
                out[j][quantity] = QEstimate(value=own, error=x.error_hz + abs(own - mean[-1]),
                                             extrapolated=x.extrapolated_hz)
    return out
