"""The report's lines on surface resistance and figures of merit (femcav.merit), from
modes.json."""

from __future__ import annotations

import html


def wall_description(wall: dict) -> str:
    """A metal wall of the model summary in words: its metal and what gives its R_s."""
    if wall.get("surface_resistance_ohm") is not None:
        return f"metal, surface resistance {wall['surface_resistance_ohm']:.4g} Ω"
    if wall.get("temperature_k") is not None:
        return (f"metal, {wall['metal']} at {wall['temperature_k']:g} K (BCS), residual "
                f"resistance {wall['residual_resistance_ohm'] * 1e9:.4g} nΩ")
    return (f"metal{', ' + wall['metal'] if wall.get('metal') else ''}, "
            f"{wall['conductivity_s_per_m'] / 1e6:.4g} MS/m")


def beam_section(document: dict) -> str:
    """An HTML section with the beam line, the conventions and one row of figures per
    mode; "" when the case has no [beam] and no geometry factor."""
    modes = document.get("modes", [])
    line = document.get("beam_line")
    has_g = any(m.get("geometry_factor_ohm") is not None for m in modes)
    if line is None and not has_g:
        return ""
    e = html.escape
    head = ["mode"] + (["G (Ω)"] if has_g else []) + (
        ["V (V at 1 J)", "T", "E_acc (V/m at 1 J)", "R/Q (Ω)", "R (Ω)", "E_pk/E_acc",
         "B_pk/E_acc (mT per MV/m)"] if line else [])
    rows = []
    for m in modes:
        cells = [str(m["index"])]
        if has_g:
            cells.append(_number(m.get("geometry_factor_ohm")))
        if line:
            beam = m.get("beam") or {}
            cells += [_number(beam.get(k)) for k in (
                "voltage_v", "transit_time_factor", "e_acc_v_per_m", "r_over_q_ohm",
                "shunt_impedance_ohm", "e_peak_over_e_acc",
                "b_peak_over_e_acc_mt_per_mv_per_m")]
        rows.append("<tr>" + "".join(f"<td>{c}</td>" for c in cells) + "</tr>")
    text = "G = Q_wall R_s, independent of the metal."
    if line:
        ends = " to ".join("(" + ", ".join(f"{v * 1e3:.6g}" for v in p) + ") mm"
                           for p in (line["from_m"], line["to_m"]))
        text = (f"Beam line {ends}, β = {line['velocity']:g}: V = |∫E_s e^(jωs/βc) ds|, "
                f"T = V / ∫|E_s| ds, E_acc = V / L, L = "
                f"{line.get('active_length_m', line['length_m']) * 1e3:.6g} mm, "
                "R/Q = V² / (ωW) (linac convention; the circuit convention is half), R = (R/Q) Q_0; peak fields on the conducting "
                "walls. " + text)
    return ("<h2>Figures of merit</h2>\n<p>" + e(text) + "</p>\n<table><thead><tr>"
            + "".join(f"<th>{e(h)}</th>" for h in head) + "</tr></thead><tbody>"
            + "".join(rows) + "</tbody></table>")


def _number(value) -> str:
    return "-" if value is None else format(value, ".5g")
