"""The mode table as terminal text, CSV and JSON.

modes.json is a stable, documented format (README, "Output files"): top-level keys
``format``, ``title``, ``case``, ``form``, ``order``, ``dofs``, ``elements``, ``request``,
``modes_returned``, ``static_fields_dropped``, ``checks_passed``, ``modes_resolved``,
``min_points_per_wavelength``, ``limits``, ``timings_s``, ``factorization`` and ``modes``
(and ``expected_accuracy`` when femcav.accuracy_plan sized the mesh);
each mode has ``index``, ``frequency_hz``, ``k0_squared_per_m2``, ``residual``,
``divergence``, ``orthogonality``, ``passed``, ``points_per_wavelength`` and ``resolved``
(post.resolution), ``loss_warnings`` (post.loss_validity), ``error_estimate_hz`` (null unless a mesh sequence was
solved; then also ``extrapolated_hz``, and for each Q below that has a value on the meshes
its bar and extrapolated value: ``q_wall_error``, ``q_wall_extrapolated``, likewise
``q_dielectric_*``, ``q_magnetic_*``, ``q_total_*``; post.q_bars), ``q_wall``, ``q_dielectric``, ``q_total`` (null without such
loss), ``wall_loss_share``, ``region_loss_share`` (name -> fraction of that loss),
``filling_factor`` (region -> share of the electric energy); for a uniaxial region
``filling_factor_parallel`` and ``filling_factor_perpendicular`` (region -> share of the
whole part's electric energy stored along and across its axis), and with a magnetic loss
tangent ``q_magnetic`` and ``magnetic_energy_filling_factor`` (region -> share of the
magnetic energy ∫ μ0 H̄·μ_r H); with ``complex_frequency_hz``
([real, imaginary] in Hz) and ``q_dielectric_complex`` after a complex check (null for a mode
no complex eigenvalue was paired with), or ``complex_frequency_hz`` and ``q_eigenvalue`` (the
Q of every loss inside the solve) when the losses were inside the solve, and ``symmetry`` (the class label, e.g. "x:PMC y:PEC")
when the model was cut by symmetry planes; then the top level has ``symmetry_classes``.
A mode of an open problem (absorbing regions, post.radiation) also has ``q_radiation`` and
``absorber_energy_share``, and the top level has ``layer_modes`` (the modes that live in the
absorbing layer, with the same fields) when the solve found any; in 3D each of its modes
has ``far_field`` (post.far_field: ``directivity_dbi``, ``peak_direction_deg`` [θ, φ],
``radiated_power_w_per_j``, ``power_balance``, ``q_from_flux``) and ``directivity_dbi``.
A mode of the axisymmetric solver also has ``azimuthal_order``, ``field_class`` (TE-like,
TM-like, TEM-like, hybrid) and ``multiplicity`` (2 for m >= 1: the cos mφ and sin mφ pair); then the
top level has ``axisymmetric`` (the orders solved and the DOFs of each). With [solve]
sensitivities, each mode has ``sensitivity_hz``: ``eps_r`` and ``mu_r``, each a region ->
df/dε_r (df/dμ_r) in Hz per unit change. With [tolerances], each mode has ``tolerance``:
``df_dp_hz_per_m``, ``tolerance_m`` and ``delta_f_hz`` per length, ``worst_case_hz`` and
``rss_hz``. With a tce or an expansion given (femcav.temperature), each mode has
``temperature_drift``: ``df_dt_hz_per_k``, ``tau_f_ppm_per_k`` and the parts
``permittivity_hz_per_k``, ``housing_hz_per_k``, ``parts_hz_per_k``. Each mode has ``magnetic_filling_factor`` (region -> share of ∫|H|²),
``magnetic_filling_axis`` (the unit axis a) and ``magnetic_filling_factor_axis`` (region ->
∫_region |H·a|² / ∫|H|²), and with [probes.NAME] ``probes`` (io.probe_table). ``weyl`` holds the optical volume for the mode-count check and ``model`` the
part (geometry, regions with their materials, walls, symmetry) when written by a case run.
``coupling`` (top level, when a cut model solved both classes of a plane or [coupling] named
two modes): a list of {``modes``, ``k``, ``f_first_hz``, ``f_second_hz``, ``source``}
(post.coupling; f_first is the magnetic-wall class or the first named mode). A mode of a
part with ports ([walls.NAME] kind = "port", femcav.ports) has ``q_external`` (port -> Q_ext),
``q_loaded``, ``coupling_factor`` (port -> β = Q_0/Q_ext; null without wall or dielectric
loss) and ``propagation_constant_per_m`` (port -> [real, imaginary] β of each terminated
mode), besides ``complex_frequency_hz`` and ``q_eigenvalue`` (all ports together).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import asdict, replace

from . import merit_columns, second_tables, strict_json
from ..post import checks, resolution
from .coupling_table import coupling_lines
from .port_table import port_lines
from .probe_table import field_figure_rows
from ..solver import SolveResult
from ..units import format_frequency

FORMAT_NAME = "femcav-modes"
FORMAT_VERSION = 1
CSV_COLUMNS = ("index", "frequency_hz", "error_estimate_hz", "q_wall", "q_dielectric", "q_total", "residual",
               "divergence", "orthogonality", "passed", "points_per_wavelength", "resolved")


def mode_rows(result: SolveResult) -> list[dict]:
    rows = []
    complex_checked = any(m.complex_frequency_hz is not None for m in result.modes)
    for m in result.modes:
        row = {"index": m.index, "frequency_hz": m.frequency_hz,
               "k0_squared_per_m2": m.k0_squared, "residual": m.checks.residual,
               "divergence": m.checks.divergence, "orthogonality": m.checks.orthogonality,
               "passed": m.checks.passed, **_resolution_fields(m)}
        if m.symmetry is not None:
            row["symmetry"] = m.symmetry
        if m.m is not None:   # a mode of a body of revolution
            row.update(azimuthal_order=m.m, field_class=m.field_class,
                       multiplicity=m.multiplicity)
        loss = m.losses
        row.update({
            "q_wall": loss.q_wall if loss else None,
            "q_dielectric": loss.q_dielectric if loss else None,
            "q_total": loss.q_total if loss else None,
            "wall_loss_share": loss.wall_loss_share if loss else {},
            "region_loss_share": loss.region_loss_share if loss else {},
            "filling_factor": loss.filling_factor if loss else {},
        })
        if loss and loss.q_magnetic is not None:
            row["q_magnetic"] = loss.q_magnetic
        for key, shares in (("filling_factor_parallel", "filling_factor_parallel"),
                            ("filling_factor_perpendicular", "filling_factor_perpendicular"),
                            ("magnetic_energy_filling_factor", "magnetic_energy_filling")):
            if loss and getattr(loss, shares):
                row[key] = getattr(loss, shares)
        row["error_estimate_hz"] = m.error_estimate_hz
        if m.extrapolated_hz is not None:
            row["extrapolated_hz"] = m.extrapolated_hz
        for quantity, q in (getattr(m, "q_estimates", None) or {}).items():
            row[f"{quantity}_error"] = q.error
            row[f"{quantity}_extrapolated"] = q.extrapolated
        if m.sensitivity is not None:
            row["sensitivity_hz"] = m.sensitivity.as_dict()
        if m.tolerance is not None:
            row["tolerance"] = m.tolerance.as_dict()
        if m.temperature is not None:
            row["temperature_drift"] = asdict(m.temperature)
        if m.label is not None:
            row["label"] = m.label
        if m.phase_advance_rad is not None:
            row["phase_advance_rad"] = m.phase_advance_rad
        if complex_checked:   # [real, imaginary]
            f = m.complex_frequency_hz
            row["complex_frequency_hz"] = None if f is None else [f.real, f.imag]
            if m.q_eigenvalue is not None:
                row["q_eigenvalue"] = m.q_eigenvalue
            else:
                row["q_dielectric_complex"] = m.q_dielectric_complex
        if m.absorber_energy_share is not None:   # an open problem (post.radiation)
            row["q_radiation"] = m.q_radiation
            row["absorber_energy_share"] = m.absorber_energy_share
        if getattr(m, "far_field", None) is not None:   # post.far_field
            row["far_field"] = m.far_field.document()
            row["directivity_dbi"] = row["far_field"]["directivity_dbi"]
        row["loss_warnings"] = list(m.loss_warnings)
        if getattr(m, "loading", None) is not None:   # ports: q_external, q_loaded, ...
            row.update(m.loading.as_dict())
        row.update(field_figure_rows(m))
        row.update(merit_columns.json_fields(m))
        rows.append(row)
    return rows


def _resolution_fields(mode) -> dict:
    res = mode.resolution
    if res is None:
        return {"points_per_wavelength": None, "resolved": None}
    ppw = res.points_per_wavelength
    return {"points_per_wavelength": ppw if math.isfinite(ppw) else None,
            "resolved": res.resolved}


def _has_far_fields(result) -> bool:
    return any(getattr(m, "far_field", None) is not None for m in result.modes)


def _directivity_text(mode) -> str:
    return "-" if mode.far_field is None else f"{mode.far_field.peak_directivity_dbi:.2f}"


def to_far_field_csv(result) -> str | None:
    """mode, theta_deg, phi_deg, e_theta_v, e_phi_v, directivity_dbi for every direction of
    every mode's pattern (r e^{jkr} |E| in V at 1 J stored); None without far fields."""
    if not _has_far_fields(result):
        return None
    lines = ["mode,theta_deg,phi_deg,e_theta_v,e_phi_v,directivity_dbi"]
    for m in result.modes:
        if m.far_field is not None:
            lines += [f"{m.index},{t:g},{p:g},{a:.6g},{b:.6g},{d:.4f}"
                      for t, p, a, b, d in m.far_field.rows()]
    return "\n".join(lines) + "\n"


def _has_symmetry(result: SolveResult) -> bool:
    return any(m.symmetry is not None for m in result.modes)


def _has_labels(result) -> bool:
    return any(getattr(m, "label", None) for m in result.modes)


def _is_axisymmetric(result) -> bool:
    return any(m.m is not None for m in result.modes)


def to_json(result: SolveResult, *, title: str, case: str | None,
            model: dict | None = None) -> str:
    request = result.request
    document = {
        "format": FORMAT_NAME, "format_version": FORMAT_VERSION, "title": title, "case": case,
        "form": result.form, "order": result.order, "dofs": result.dofs,
        "elements": result.elements,
        "request": {"modes": request.count if request else len(result.modes),
                    "near_hz": result.near_hz},
        "static_fields_dropped": result.static_fields_dropped,
        "modes_returned": len(result.modes),
        "checks_passed": result.passed,
        "modes_resolved": result.resolved,
        "min_points_per_wavelength": resolution.MIN_POINTS_PER_WAVELENGTH[result.order],
        "limits": {"residual": checks.RESIDUAL_LIMIT, "divergence": checks.DIVERGENCE_LIMIT,
                   "orthogonality": checks.ORTHOGONALITY_LIMIT},
        "timings_s": result.timings,
        "factorization": result.eigen_stats.factorization,
        "modes": mode_rows(result),
    }
    if result.classes:
        document["symmetry_classes"] = result.classes
    document["weyl"] = weyl_summary(result)
    if model is not None:
        document["model"] = model
    if getattr(result, "dofs_by_order", None):
        document["axisymmetric"] = {"azimuthal_orders": list(result.dofs_by_order),
                                    "dofs_by_order": {str(k): v for k, v
                                                      in result.dofs_by_order.items()},
                                    "element": "triangles of the meridional section"}
    if result.accuracy is not None:
        document["accuracy"] = asdict(result.accuracy)
    if getattr(result, "expected_accuracy", None) is not None:
        document["expected_accuracy"] = result.expected_accuracy
    if getattr(result, "layer_modes", None):
        document["layer_modes"] = mode_rows(replace(result, modes=result.layer_modes))
    document.update(merit_columns.json_top_level(result))
    if getattr(result, "coupling", ()):
        document["coupling"] = [c.as_dict() for c in result.coupling]
    return strict_json.dumps(document, indent=2)


def weyl_summary(result) -> dict:
    """What the Weyl mode-count check needs: the part's optical volume ∫ (ε_r μ_r)^(3/2) dV
    (the whole part, m³) and the share of its modes that the solve could list (symmetry
    classes left out, azimuthal orders not solved)."""
    import numpy as np

    if getattr(result, "dofs_by_order", None):
        space = next(iter(result.spaces.values()))
        r = space.edge_basis.mapping.F(space.edge_basis.X)[0]
        n3 = (space.eps * space.mu) ** 1.5
        volume = float(2 * np.pi * np.sum(r * n3 * space.edge_basis.dx))
        return {"optical_volume_m3": volume, "listed_share": None,
                "note": f"azimuthal orders {list(result.dofs_by_order)} only"}
    from ..post.fields import centroid_materials

    space = result.space
    mesh = space.model.mesh
    eps, mu = centroid_materials(space)
    cuts = sum(1 for name in mesh.wall_names if name.startswith("symmetry_"))
    if eps.ndim == 3:       # anisotropic: the mean of each tensor's eigenvalues
        eps, mu = (np.real(np.trace(t, axis1=1, axis2=2)) / 3 for t in (eps, mu))
    volume = float(np.sum(np.abs(mesh.tet_volumes()) * (eps * mu) ** 1.5)) * 2**cuts
    classes = max(1, len(result.classes))
    return {"optical_volume_m3": volume, "listed_share": classes / 2**cuts, "note": ""}


def to_csv(result: SolveResult) -> str:
    out = io.StringIO()
    columns = CSV_COLUMNS + (("symmetry",) if _has_symmetry(result) else ()) + (
        ("azimuthal_order", "field_class") if _is_axisymmetric(result) else ()) + (
        ("q_dielectric_complex",) if any(m.q_dielectric_complex for m in result.modes) else ()
    ) + (("q_magnetic",) if any(m.losses and m.losses.q_magnetic for m in result.modes)
         else ()) + (("label",) if _has_labels(result) else ()) + (
        ("q_radiation", "absorber_energy_share")
        if any(m.absorber_energy_share is not None for m in result.modes) else ()
    ) + (("directivity_dbi",) if _has_far_fields(result) else ()) + merit_columns.csv_columns(result)
    writer = csv.DictWriter(out, fieldnames=columns, extrasaction="ignore", lineterminator="\n")
    writer.writeheader()
    for row in mode_rows(result):
        writer.writerow({**row, "frequency_hz": repr(row["frequency_hz"]),
                         "error_estimate_hz": "" if row["error_estimate_hz"] is None
                         else f"{row['error_estimate_hz']:.3g}",
                         "points_per_wavelength": "" if row["points_per_wavelength"] is None
                         else f"{row['points_per_wavelength']:.3g}",
                         **{k: "" if row[k] is None else f"{row[k]:.6g}"
                            for k in ("q_wall", "q_dielectric", "q_total")},
                         **merit_columns.csv_values(row)})
    return out.getvalue()


# Significant digits of a frequency in the table without an error bar.
TABLE_DIGITS = 7


def frequency_digits(frequency_hz: float, bar_hz: float | None,
                     default: int = TABLE_DIGITS) -> int:
    """Digits that a frequency earns in a table: down to the second significant digit of
    its error bar (7.68695 GHz ± 268 MHz prints as 7.69 GHz), at least 3; without a bar,
    ``default``. modes.json and modes.csv keep full precision."""
    if bar_hz is None or not bar_hz > 0 or not frequency_hz > 0:
        return default
    earned = math.floor(math.log10(frequency_hz)) - math.floor(math.log10(bar_hz)) + 2
    return max(3, min(earned, 12))


def to_table(result: SolveResult) -> str:
    width = max([len(m.symmetry or "") for m in result.modes] + [len("symmetry")])
    sym = _has_symmetry(result)
    lossy = any(m.losses for m in result.modes)
    inside = any(m.q_eigenvalue is not None for m in result.modes)
    magnetic = any(m.losses and m.losses.q_magnetic for m in result.modes)
    radiating = any(m.q_radiation is not None for m in result.modes)
    patterns = _has_far_fields(result)
    bars = any(m.error_estimate_hz is not None for m in result.modes)
    axisymmetric = _is_axisymmetric(result)
    label_width = max([len(m.label or "") for m in result.modes]
                      + [len("label")]) if _has_labels(result) else 0
    lines = [f"{'mode':>4}  {'frequency':>16}  " + (f"{'± error':>12}  " if bars else "")
             + (f"{'label':<{label_width}}  " if label_width else "")
             + (f"{'symmetry':<{width}}  " if sym else "")
             + (f"{'m':>2}  {'class':<8}  " if axisymmetric else "")
             + (f"{'Q wall':>9}  {'Q diel.':>9}  " + (f"{'Q magn.':>9}  " if magnetic else "")
                + f"{'Q total':>9}  " if lossy else "")
             + (f"{'Q (f)':>9}  " if inside else "")
             + (f"{'Q rad':>9}  " if radiating else "")
             + (f"{'D (dBi)':>7}  " if patterns else "")
             + merit_columns.table_heading(result)
             + f"{'residual':>9}  {'divergence':>10}  {'orthogonality':>13}  check"]
    for m in result.modes:
        c = m.checks
        status = "ok" if c.passed else "FAILED: " + "; ".join(c.failures())
        res = m.resolution
        if res is not None and not res.resolved:
            status = (f"NOT RESOLVED: {res.points_per_wavelength:.2g} elements per wavelength "
                      f"< {res.required:g}" + ("" if c.passed else "; " + status))
        if m.loss_warnings:
            status += "; Q warning (see loss_warnings)"
        shown = format_frequency(m.frequency_hz,
                                 frequency_digits(m.frequency_hz, _bar_or_expected(result, m)))
        lines.append(f"{m.index:>4}  {shown:>16}  "
                     + (f"{_bar(m):>12}  " if bars else "")
                     + (f"{m.label or '-':<{label_width}}  "
                        if label_width else "")
                     + (f"{m.symmetry:<{width}}  " if sym else "")
                     + (f"{m.m:>2}  {m.field_class:<8}  " if axisymmetric else "")
                     + (_q_columns(m, magnetic) if lossy else "")
                     + (f"{_q_text(m.q_eigenvalue):>9}  " if inside else "")
                     + (f"{_q_text(m.q_radiation):>9}  " if radiating else "")
                     + (f"{_directivity_text(m):>7}  " if patterns else "")
                     + merit_columns.table_cells(result, m)
                     + f"{c.residual:9.1e}  {c.divergence:10.1e}  {c.orthogonality:13.1e}  "
                     f"{status}")
    return ("\n".join(lines + monte_carlo_lines(result)
                      + coupling_lines(getattr(result, "coupling", ()))
                      + port_lines(result))
            + second_tables.as_text(mode_rows(result)))


def _bar_or_expected(result, mode) -> float | None:
    """The mode's error bar, or without one the documented accuracy: the target the solve
    aimed at (femcav.accuracy_plan), else the bound its resolution implies
    (post.resolution.expected_error); as Hz."""
    if mode.error_estimate_hz is not None:
        return mode.error_estimate_hz
    expected = getattr(result, "expected_accuracy", None)
    if expected is None:
        expected = resolution.expected_error(mode.resolution, getattr(result, "order", None))
    return None if expected is None else expected * mode.frequency_hz


def monte_carlo_lines(result) -> list[str]:
    """The spread of every mode under the table (empty without a Monte-Carlo draw)."""
    entries = [(m, m.tolerance.monte_carlo) for m in result.modes if m.tolerance]
    entries = [(m, e) for m, e in entries if e is not None]
    if not entries:
        return []
    def show(v, digits=4):
        return "-" if v is None else format_frequency(v, digits)
    n = max(e["samples"] for _, e in entries)
    lines = [f"Monte-Carlo spread over {n} samples (seed {entries[0][1]['seed']}):",
             f"{'mode':>4}  {'mean':>16}  {'std. dev.':>12}  {'1st pct.':>16}  "
             f"{'99th pct.':>16}  {'linear std.':>12}"]
    for m, e in entries:
        lines.append(f"{m.index:>4}  {show(e.get('mean_hz'), 9):>16}  {show(e.get('std_hz')):>12}"
                     f"  {show(e.get('p01_hz'), 9):>16}  {show(e.get('p99_hz'), 9):>16}  "
                     f"{show(e['linear_std_hz']):>12}")
    return lines


def _q_columns(mode, magnetic: bool = False) -> str:
    loss = mode.losses
    values = (loss.q_wall, loss.q_dielectric, loss.q_total) if loss else (None, None, None)
    if magnetic:
        values = values[:2] + (loss.q_magnetic if loss else None,) + values[2:]
    return "".join(f"{_q_text(q):>9}  " for q in values)


def _q_text(q: float | None) -> str:
    return "-" if q is None else format(q, ".5g")


def _bar(mode) -> str:
    return "-" if mode.error_estimate_hz is None else format_frequency(mode.error_estimate_hz, 3)
