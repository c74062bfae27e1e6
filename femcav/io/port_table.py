"""What the ports make of each mode, as text under the mode table and as response.csv: the
external Q per port, the loaded Q, the coupling factors, and the single-pole response
(post.response) over a band around every port-loaded mode."""

from __future__ import annotations

import csv
import io
import math

from ..post.response import NEIGHBOUR_LIMIT, Resonance, neighbour_bandwidths, response_rows

RESPONSE_COLUMNS = ("mode", "frequency_hz", "to_port", "from_port", "magnitude_db",
                    "phase_deg", "group_delay_s")
MODEL_NOTE = ("single-pole model per mode (post.response): valid while no other mode lies "
              f"within {NEIGHBOUR_LIMIT:g} loaded bandwidths")


def _loaded(result) -> list:
    return [m for m in result.modes if getattr(m, "loading", None) is not None]


def _q0(mode) -> float | None:
    return mode.losses.q_total if mode.losses else None


def resonance(mode) -> Resonance:
    return Resonance(mode.frequency_hz, _q0(mode), dict(mode.loading.q_external))


def port_lines(result) -> list[str]:
    """The table of Q_ext, Q_L and β per mode (no lines without ports)."""
    loaded = _loaded(result)
    if not loaded:
        return []
    ports = list(loaded[0].loading.q_external)
    lines = ["", "ports: external Q (1/Q_ext = 2 Im f / Re f, split by the power each port "
             "carries), loaded Q (1/Q_L = 1/Q_0 + Σ 1/Q_ext), coupling factor β = Q_0/Q_ext",
             f"{'mode':>4}  {'Q_0':>9}  " + "".join(f"{'Q_ext ' + p:>14}  " for p in ports)
             + f"{'Q_L':>9}  " + "".join(f"{'β ' + p:>10}  " for p in ports)
             + "nearest other mode"]
    others = [m.frequency_hz for m in result.modes]
    for m in loaded:
        load = m.loading
        beta = load.coupling_factor or {}
        gap = neighbour_bandwidths(m.frequency_hz, load.q_loaded, others)
        note = ("-" if not math.isfinite(gap) else f"{gap:.3g} bandwidths"
                + (" (single-pole model doubtful)" if gap < NEIGHBOUR_LIMIT else ""))
        lines.append(f"{m.index:>4}  {_text(_q0(m)):>9}  "
                     + "".join(f"{_text(load.q_external.get(p)):>14}  " for p in ports)
                     + f"{_text(load.q_loaded):>9}  "
                     + "".join(f"{_text(beta.get(p)):>10}  " for p in ports) + note)
    return lines + [MODEL_NOTE]


def _text(q) -> str:
    return "-" if q is None or not math.isfinite(q) else format(q, ".5g")


def to_response_csv(result) -> str | None:
    """response.csv: every S_pq of every port-loaded mode with a finite loaded Q over
    f0 ± 5 loaded bandwidths; None without ports."""
    loaded = [m for m in _loaded(result) if math.isfinite(m.loading.q_loaded)]
    if not _loaded(result):
        return None
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(RESPONSE_COLUMNS)
    for m in loaded:
        for row in response_rows(m.index, resonance(m)):
            writer.writerow((row.mode, repr(row.frequency_hz), row.to_port, row.from_port,
                             f"{row.magnitude_db:.6g}", f"{row.phase_deg:.6g}",
                             f"{row.group_delay_s:.6g}"))
    return out.getvalue()
