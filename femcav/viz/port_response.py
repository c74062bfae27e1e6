"""The ports of a result folder in the report: each port-loaded mode's Q factors (table) and
its single-pole response (response.png: |S| in dB and the group delay of each S_pq over the
band of every mode), drawn from modes.json with post.response."""

from __future__ import annotations

import html
import math
from pathlib import Path

import numpy as np

from ..io.port_table import MODEL_NOTE
from ..post.response import Resonance, band, group_delay_s, s_parameter
from ..units import format_frequency
from .chart_style import PALETTE

SIZE_INCHES = (8.0, 6.2)


def _loaded_rows(document: dict) -> list[dict]:
    return [m for m in document.get("modes", []) if m.get("q_external")
            and m.get("q_loaded") is not None]


def _resonance(row: dict) -> Resonance:
    return Resonance(row["frequency_hz"], row.get("q_total"), dict(row["q_external"]))


def has_response(document: dict) -> bool:
    return bool(_loaded_rows(document))


def write_response_plot(document: dict, path: Path) -> None:
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, (top, bottom) = plt.subplots(2, 1, figsize=SIZE_INCHES, sharex=False)
    k = 0
    for row in _loaded_rows(document):
        resonance = _resonance(row)
        f = band(resonance)
        ports = list(resonance.q_external)
        for to_port in ports:
            for from_port in ports:
                if ports.index(from_port) > ports.index(to_port):
                    continue      # reciprocal: S_pq = S_qp
                s = s_parameter(resonance, to_port, from_port, f)
                label = f"mode {row['index']}: S({to_port}, {from_port})"
                style = dict(color=PALETTE[k % len(PALETTE)], linewidth=1.2, label=label)
                top.plot(f / 1e9, 20 * np.log10(np.abs(s)), **style)
                bottom.plot(f / 1e9, group_delay_s(resonance, to_port, from_port, f) * 1e9,
                            **style)
                k += 1
    top.set_ylabel("|S| (dB)")
    bottom.set_ylabel("group delay (ns)")
    bottom.set_xlabel("frequency (GHz)")
    top.legend(fontsize=8)
    top.set_title("single-pole response of each port-loaded mode")
    for axis in (top, bottom):
        axis.grid(True, alpha=0.3)
    fig.tight_layout()
    fig.savefig(path, dpi=110)
    plt.close(fig)


def port_section(document: dict, image_html: str) -> str:
    """HTML: the Q table of the port-loaded modes and the response picture (``image_html``,
    "" when not drawn); "" without ports."""
    rows = _loaded_rows(document)
    if not rows:
        return ""
    e = html.escape
    ports = list(rows[0]["q_external"])
    head = (["mode", "frequency", "Q_0"] + [f"Q_ext {p}" for p in ports] + ["Q_L"]
            + [f"β {p}" for p in ports])
    body = []
    for row in rows:
        beta = row.get("coupling_factor") or {}
        cells = ([str(row["index"]), format_frequency(row["frequency_hz"], 9),
                  _number(row.get("q_total"))]
                 + [_number(row["q_external"].get(p)) for p in ports]
                 + [_number(row.get("q_loaded"))] + [_number(beta.get(p)) for p in ports])
        body.append("<tr>" + "".join(f"<td>{e(c)}</td>" for c in cells) + "</tr>")
    figure = ""
    if image_html:
        figure = (f"<figure>{image_html}<figcaption>{e(MODEL_NOTE)}; the "
                  "values are in response.csv</figcaption></figure>")
    return ("<h2>Ports</h2><p>1/Q_L = 1/Q_0 + Σ 1/Q_ext; β = Q_0/Q_ext (Q_0 from the wall "
            "and dielectric losses).</p><table><thead><tr>"
            + "".join(f"<th>{e(h)}</th>" for h in head) + "</tr></thead><tbody>"
            + "".join(body) + "</tbody></table>" + figure)


def _number(value) -> str:
    return "-" if value is None or not math.isfinite(value) else format(value, ".5g")
