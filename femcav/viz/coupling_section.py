"""The report's section on coupled resonators: the coupling coefficients of modes.json's
``coupling`` list (post.coupling), with the sign convention."""

from __future__ import annotations

import html

from ..io.coupling_table import SIGN_NOTE
from ..units import format_frequency


def coupling_section(document: dict) -> str:
    """HTML for the coupling coefficients; "" when there are none."""
    rows = document.get("coupling") or []
    if not rows:
        return ""
    e = html.escape
    body = []
    for c in rows:
        first, second = c["f_first_hz"], c["f_second_hz"]
        f_a, f_b = (second, first) if c["source"] == "named modes" else (first, second)
        cells = (f"{c['modes'][0]}, {c['modes'][1]}", f"{c['k']:.5g}",
                 format_frequency(f_a, 9), format_frequency(f_b, 9), c["source"])
        body.append("<tr>" + "".join(f"<td>{e(x)}</td>" for x in cells) + "</tr>")
    return ("<h2>Coupling coefficients</h2>"
            f"<p>{e(SIGN_NOTE)}.</p><table><thead><tr>"
            + "".join(f"<th>{h}</th>" for h in ("modes", "k", "f_a", "f_b", "source"))
            + "</tr></thead><tbody>" + "".join(body) + "</tbody></table>")
