"""The figures of merit (femcav.merit) in the result files: modes.json fields, CSV columns
and the short columns of the mode table.

modes.json, per mode: ``geometry_factor_ohm`` (null without wall loss) and, with [beam],
``beam`` = {``voltage_v``, ``transit_time_factor``, ``e_acc_v_per_m``, ``r_over_q_ohm``,
``shunt_impedance_ohm``, ``e_peak_over_e_acc``, ``b_peak_over_e_acc_mt_per_mv_per_m``,
``e_peak_at_m``, ``b_peak_at_m``}; at the top level ``beam_line`` (``from_m``, ``to_m``,
``length_m``, ``velocity``, ``active_length_m``: the length E_acc is quoted over).
"""

from __future__ import annotations

BEAM_CSV = ("voltage_v", "transit_time_factor", "e_acc_v_per_m", "r_over_q_ohm",
            "shunt_impedance_ohm", "e_peak_over_e_acc", "b_peak_over_e_acc_mt_per_mv_per_m")
# (heading, key of the beam figures, format) of the mode table's short columns
BEAM_TABLE = (("R/Q ohm", "r_over_q_ohm", ".5g"), ("T", "transit_time_factor", ".4f"),
              ("Epk/Eacc", "e_peak_over_e_acc", ".4g"),
              ("Bpk/Eacc mT/(MV/m)", "b_peak_over_e_acc_mt_per_mv_per_m", ".4g"))


def has_geometry_factor(result) -> bool:
    return any(m.geometry_factor_ohm is not None for m in result.modes)


def has_beam(result) -> bool:
    return any(m.beam is not None for m in result.modes)


def json_fields(mode) -> dict:
    out = {"geometry_factor_ohm": mode.geometry_factor_ohm}
    if mode.beam is not None:
        out["beam"] = mode.beam.as_dict()
    return out


def json_top_level(result) -> dict:
    beams = [m.beam for m in result.modes if m.beam is not None]
    return {"beam_line": beams[0].line.summary()} if beams else {}


def csv_columns(result) -> tuple[str, ...]:
    return ((("geometry_factor_ohm",) if has_geometry_factor(result) else ())
            + (BEAM_CSV if has_beam(result) else ()))


def csv_values(row: dict) -> dict:
    """The CSV cells of a mode row (mode_rows) for csv_columns."""
    values = {"geometry_factor_ohm": row.get("geometry_factor_ohm"), **(row.get("beam") or {})}
    return {k: "" if values.get(k) is None else f"{values[k]:.6g}"
            for k in ("geometry_factor_ohm", *BEAM_CSV)}


def table_heading(result) -> str:
    """The short columns of the table: with [beam] only (G alone stays in the files, so that
    the table of a case without [beam] keeps its columns)."""
    if not has_beam(result):
        return ""
    out = f"{'G ohm':>9}  " if has_geometry_factor(result) else ""
    return out + "".join(f"{h:>{_width(h)}}  " for h, _, _ in BEAM_TABLE)


def table_cells(result, mode) -> str:
    out = ""
    if not has_beam(result):
        return out
    if has_geometry_factor(result):
        g = mode.geometry_factor_ohm
        out += f"{'-' if g is None else format(g, '.5g'):>9}  "
    figures = mode.beam.as_dict() if mode.beam is not None else {}
    for heading, key, digits in BEAM_TABLE:
        value = figures.get(key)
        out += f"{'-' if value is None else format(value, digits):>{_width(heading)}}  "
    return out


def _width(heading: str) -> int:
    return max(9, len(heading))
