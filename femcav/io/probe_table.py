"""The magnetic filling factors and probe values of the modes, for modes.json and
probes.csv.

probes.csv has one row per mode and probe point, units in the column names: the point, its
distance along a line probe, the complex components of E and H (real and imaginary parts)
and their magnitudes at 1 J stored, the magnitudes at 1 W dissipated and B1/sqrt(P) (empty
without losses).
"""

from __future__ import annotations

import csv
import io

from ..post.probes import probe_document

PROBE_COLUMNS = (
    ("mode", "frequency_hz", "probe", "point", "x_m", "y_m", "z_m", "distance_m")
    + tuple(f"e{c}_{part}_v_per_m" for c in "xyz" for part in ("re", "im"))
    + ("e_abs_v_per_m",)
    + tuple(f"h{c}_{part}_a_per_m" for c in "xyz" for part in ("re", "im"))
    + ("h_abs_a_per_m", "e_abs_at_1w_v_per_m", "h_abs_at_1w_a_per_m",
       "b1_per_sqrt_p_t_per_sqrt_w"))


def field_figure_rows(mode) -> dict:
    """The entries of one mode's row in modes.json (none for a mode without them)."""
    row = {}
    filling = mode.magnetic_filling
    if filling is not None:
        row.update(magnetic_filling_factor=filling.total,
                   magnetic_filling_axis=list(filling.axis),
                   magnetic_filling_factor_axis=filling.along_axis)
    probes = mode.probes
    if probes:
        row["probes"] = {values.name: probe_document(values) for values in probes}
    return row


def to_probes_csv(result) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(PROBE_COLUMNS)
    for mode in result.modes:
        for values in mode.probes:
            scale = values.watt_scale
            b1 = values.b1_per_sqrt_watt
            for k, point in enumerate(values.points):
                e, h = values.E[k], values.H[k]
                cells = [mode.index, repr(mode.frequency_hz), values.name, k + 1,
                         *point, values.distance[k]]
                cells += [v for c in range(3) for v in (e[c].real, e[c].imag)]
                cells.append(values.e_abs[k])
                cells += [v for c in range(3) for v in (h[c].real, h[c].imag)]
                cells.append(values.h_abs[k])
                cells += (["", "", ""] if scale is None else
                          [values.e_abs[k] * scale, values.h_abs[k] * scale, b1[k]])
                writer.writerow([f"{v + 0.0:.9g}" if isinstance(v, float) else v for v in cells])   # no "-0"
    return out.getvalue()
